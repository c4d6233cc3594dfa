#!/bin/bash
# test_wait_policy.sh - how the program's waiting OpenMP threads behave
# (src/cli/wait_policy.c; README, "Speed"): with neither OMP_WAIT_POLICY nor
# GOMP_SPINCOUNT in the environment, the OpenMP runtime of `twingyre` and of
# the members a sweep starts spins briefly before it sleeps (spin count
# 10000, src/cli/wait_policy.c); a value the user
# set is kept (OMP_WAIT_POLICY=active, GOMP_SPINCOUNT=N); under valgrind the
# program still runs. The runtime's own
# report of its settings (OMP_DISPLAY_ENV=verbose, printed on stderr when it
# starts; OpenMP 5.2 specification, section 21.7, for OMP_DISPLAY_ENV, and
# the GNU libgomp manual for GOMP_SPINCOUNT and its values: 0 when passive,
# 300000 by default) is what is checked: the setting that takes effect, not
# the variable. No timing here (scripts/bench measures the speed).
#
# Prints "ok - ..." or "FAIL - ..." per check and "N passed, M failed" last;
# exits 0 only when no check failed.
#
# Part of twingyre. GPL-3.0-or-later.

set -u
. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
tg_scratch wait
tg_need_program

# The spin count of the last report on stderr file $1 ("" when none).
last_spincount() {
    grep -E "^ *GOMP_SPINCOUNT = '" "$1" | tail -n 1 | sed -E "s/.*= '([0-9]+)'.*/\1/"
}

# Runs `twingyre --version` with environment VAR=VALUE... (after removing
# both variables): status in rc, the spin count that took effect in got.
spin_with() {
    env -u OMP_WAIT_POLICY -u GOMP_SPINCOUNT OMP_DISPLAY_ENV=verbose "$@" \
        "$TWINGYRE" --version >out 2>err
    rc=$?
    got=$(last_spincount err)
}

spin_with
if [ "$rc" -eq 0 ] && [ "$got" = 10000 ] && has "twingyre" out; then
    ok "no wait policy in the environment: the runtime spins briefly (spin count 10000)"
else
    notok "no wait policy in the environment: the runtime spins briefly (spin count 10000)" \
        "exit $rc, spin count '$got'" "$(cat err)"
fi
spin_with OMP_WAIT_POLICY=active
if [ "$rc" -eq 0 ] && [ -n "$got" ] && [ "$got" != 0 ] && grep -q "OMP_WAIT_POLICY = 'ACTIVE'" err; then
    ok "OMP_WAIT_POLICY=active set by the user is kept"
else
    notok "OMP_WAIT_POLICY=active set by the user is kept" "exit $rc, spin count '$got'" "$(cat err)"
fi
spin_with GOMP_SPINCOUNT=1234
if [ "$rc" -eq 0 ] && [ "$got" = 1234 ]; then
    ok "GOMP_SPINCOUNT set by the user is kept"
else
    notok "GOMP_SPINCOUNT set by the user is kept" "exit $rc, spin count '$got'" "$(cat err)"
fi
spin_with OMP_WAIT_POLICY=passive
if [ "$rc" -eq 0 ] && [ "$got" = 0 ] && [ "$(grep -c 'GOMP_SPINCOUNT' err)" = 1 ]; then
    ok "OMP_WAIT_POLICY=passive set by the user: one start, passive"
else
    notok "OMP_WAIT_POLICY=passive set by the user: one start, passive" "exit $rc" "$(cat err)"
fi

# Under valgrind the program does not execute itself again (valgrind's
# /proc/self/exe is its own tool, which refuses to start). Checked only where
# valgrind is installed and the program is not built with AddressSanitizer
# (make check-asan), which cannot run under valgrind.
prog=$TWINGYRE
# the libtool wrapper's real program, with the wrapper's library path
real=$(dirname "$TWINGYRE")/.libs/$(basename "$TWINGYRE")
[ -x "$real" ] && prog=$real
if grep -qa AddressSanitizer "$prog"; then
    echo "# a sanitizer build: the valgrind check is left out"
elif command -v valgrind >/dev/null 2>&1; then
    env -u OMP_WAIT_POLICY -u GOMP_SPINCOUNT LD_LIBRARY_PATH="$TG_BUILDDIR/.libs:${LD_LIBRARY_PATH:-}" \
        valgrind -q "$prog" --version >out 2>err
    rc=$?
    if [ "$rc" -eq 0 ] && has "twingyre" out; then
        ok "under valgrind the program runs (no second start)"
    else
        notok "under valgrind the program runs (no second start)" "exit $rc" "$(cat err)"
    fi
else
    echo "# valgrind is not installed: the valgrind check is left out"
fi

# A sweep member started by the local pool: its own runtime reports on its
# member.log.
small_basin 17 >base.ini
cat >>base.ini <<'EOF'
duration_days = 2

[output]
snapshot_every_days = 1
EOF
cat >one.ini <<'EOF'
[sweep]
base = base.ini
combine = product

[vary]
dissipation.viscosity_m2_per_s = 500
EOF
env -u OMP_WAIT_POLICY -u GOMP_SPINCOUNT OMP_DISPLAY_ENV=verbose "$TWINGYRE" sweep one.ini \
    --jobs 1 --out "$T/sweep" --quiet >out 2>err
rc=$?
log=$(ls "$T"/sweep/*/member.log 2>/dev/null | head -n 1)
got=""
[ -n "$log" ] && got=$(last_spincount "$log")
if [ "$rc" -eq 0 ] && [ "$got" = 10000 ]; then
    ok "a member the sweep pool starts spins briefly too (spin count 10000)"
else
    notok "a member the sweep pool starts spins briefly too (spin count 10000)" "exit $rc, log '$log', spin count '$got'" \
        "$(cat err)" "$( [ -n "$log" ] && cat "$log")"
fi
finish
