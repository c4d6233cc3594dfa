#!/bin/bash
# test_sweep_mpi.sh - `mpirun -np 2 twingyre sweep` gives the same sweep.csv
# as the local pool, byte for byte (sweep.csv holds no host or time
# columns) with every member done, a second run skips what is done, and a
# member that blows up is recorded as failed under MPI too.
#
# SKIP (exit 77) when twingyre was built without --with-mpi or mpirun is
# missing, unless TG_REQUIRE_MPI=1 (scripts/test sets it): then FAIL.
# Open MPI refuses to run as root without OMPI_ALLOW_RUN_AS_ROOT and
# OMPI_ALLOW_RUN_AS_ROOT_CONFIRM; the test sets both, and --oversubscribe
# lets two ranks run on a machine with fewer free cores.
#
# Environment: see sweep_common.sh; TG_MPI_BUILT (yes/no) and TG_MPIRUN
# come from the build (Makefile.am).
#
# Part of twingyre. GPL-3.0-or-later.

set -u
. "$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)/sweep_common.sh"

mpirun=${TG_MPIRUN:-$(command -v mpirun || true)}
if [ "${TG_MPI_BUILT:-no}" != yes ] || [ -z "$mpirun" ]; then
    if [ "${TG_REQUIRE_MPI:-0}" = 1 ]; then
        notok "twingyre is built with MPI and mpirun is available (TG_REQUIRE_MPI=1)" \
            "TG_MPI_BUILT=${TG_MPI_BUILT:-no}, mpirun='$mpirun'; configure --with-mpi with the Debian packages libopenmpi-dev and openmpi-bin"
        finish
    fi
    skip "twingyre was built without MPI or mpirun is missing (TG_MPI_BUILT=${TG_MPI_BUILT:-no})"
fi
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
# Shared-memory transport only; no network interfaces needed.
export OMPI_MCA_btl=self,vader OMPI_MCA_btl_vader_single_copy_mechanism=none

sweep_local

# In a sanitizer build (make check-asan) LeakSanitizer would report what the
# Open MPI runtime keeps allocated past MPI_Finalize; leak checks of our own
# code come from test_sweep.sh, which runs the same code without MPI.
mpi_sweep() { # sweep file, output folder
    ASAN_OPTIONS="${ASAN_OPTIONS:+$ASAN_OPTIONS:}detect_leaks=0" \
        timeout 300 "$mpirun" --oversubscribe -np 2 "$TWINGYRE" sweep "$1" --out "$2" \
        >"$T/out" 2>"$T/err"
    rc=$?
}
mpi_sweep grid.ini "$T/mpi"
if [ "$rc" -eq 0 ] && grep -q 'sweep: 2 ranks' "$T/err"; then
    ok "mpirun -np 2 twingyre sweep completes on two ranks (exit 0)"
else
    notok "mpirun -np 2 twingyre sweep completes on two ranks (exit 0)" "$(err_tail)"
fi
if cmp -s "$T/local/sweep.csv" "$T/mpi/sweep.csv"; then
    ok "sweep.csv from MPI equals the local pool's byte for byte"
else
    notok "sweep.csv from MPI equals the local pool's byte for byte" \
        "$(diff "$T/local/sweep.csv" "$T/mpi/sweep.csv" 2>&1 | head -n 10)"
fi

# A blow-up under MPI: recorded, the others go on, exit 9.
cat >fail.ini <<'EOF'
[sweep]
base = base.ini
[vary]
wind.stress_amplitude_pa = 0.1, 20, 0.12
EOF
mpi_sweep fail.ini "$T/mpi-fail"
if [ "$rc" -eq 9 ] && [ "$(grep -c ',done,0,' "$T/mpi-fail/sweep.csv")" -eq 2 ] &&
    grep -q ',failed,5,' "$T/mpi-fail/sweep.csv"; then
    ok "under MPI a member that blows up is recorded as failed and the others complete (exit 9)"
else
    notok "under MPI a member that blows up is recorded as failed and the others complete" \
        "$(err_tail)" "$(cat "$T/mpi-fail/sweep.csv" 2>&1)"
fi

# Re-running under MPI skips what is done.
mpi_sweep grid.ini "$T/mpi"
if [ "$rc" -eq 0 ] && grep -q 'skipping 4 members already done' "$T/err" &&
    cmp -s "$T/local/sweep.csv" "$T/mpi/sweep.csv"; then
    ok "a second MPI run skips the finished members"
else
    notok "a second MPI run skips the finished members" "$(err_tail)"
fi

finish
