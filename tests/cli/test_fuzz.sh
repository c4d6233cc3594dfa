#!/bin/bash
# test_fuzz.sh - the bounded fuzz test of twingyre's inputs: mutated
# configs, sweep files and NetCDF inputs (checkpoint.nc, fields.nc,
# subgrid.nc) from a fixed seed, run by fuzz_inputs.py. It fails on a crash,
# a sanitizer report, a hang or exit 0 on damaged input. Meant for the
# sanitizer build, where `make check-asan` runs a few hundred cases; plain
# `make check` runs a few tens.
#
# Environment: TG_FUZZ_CASES (number of cases; default 24), TG_FUZZ_SEED
# (default 1), TG_FUZZ_TIMEOUT (seconds a case may take; default 120),
# TG_FUZZ_ONLY (rerun one case index), and TWINGYRE, TG_SRCDIR, PYTHON
# (default /usr/bin/python3), TG_TEST_TMPDIR as every test. A failing case
# keeps its inputs when TG_KEEP_TMP=1.
#
# Prints "ok - ..." or "FAIL - ..." per check and as its last line
# "N passed, M failed"; exits 0 only when no check failed.
#
# Part of twingyre. GPL-3.0-or-later.

set -u

. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
tg_scratch fuzz
tg_need_program
CASES=${TG_FUZZ_CASES:-24}
SEED=${TG_FUZZ_SEED:-1}
TIMEOUT=${TG_FUZZ_TIMEOUT:-120}
B=$T/base
mkdir -p "$B" "$T/work"

# The inputs to mutate.
cp "$TG_SRCDIR/tests/cli/configs/small33.ini" "$B/small33.ini"
tg run "$B/small33.ini" --out "$T/good" --quiet
cp "$T/good/checkpoint.nc" "$T/good/fields.nc" "$B/" 2>/dev/null
tiny_twin 2 4 >"$T/twin.ini"
tg twin "$T/twin.ini" --out "$T/tw" --quiet
cp "$T/tw/subgrid.nc" "$B/" 2>/dev/null
{
    small_basin 33 500
    cat <<'EOF'
duration_days = 2

[initial]
state = noise
noise_amplitude_m2_per_s = 100
seed = 7
EOF
} >"$B/base.ini"
cat >"$B/sweep.ini" <<'EOF'
[sweep]
base = base.ini
combine = product
seeds = 1, 2

[vary]
dissipation.viscosity_m2_per_s = 400, 800

[cluster]
job_name = tg-fuzz
partition = tgfuzz
time_limit = 00:05:00
cpus_per_task = 1
EOF
for f in checkpoint.nc fields.nc subgrid.nc; do
    [ -s "$B/$f" ] || { notok "the base input $f was made" "$(err_tail)"; finish; }
done
ok "base inputs made (checkpoint.nc, fields.nc, subgrid.nc, a config and a sweep file)"

"$PYTHON" "$TG_SRCDIR/tests/cli/fuzz_inputs.py" "$TWINGYRE" "$B" "$T/work" "$CASES" "$SEED" \
    "$TIMEOUT" ${TG_FUZZ_ONLY:+"$TG_FUZZ_ONLY"} >"$T/fuzz.out" 2>&1
st=$?
check "$(tail -n 1 "$T/fuzz.out") (seed $SEED): no crash, sanitizer report, hang or exit 0 on damaged input" \
    "$st" "$(grep -v '^fuzz:' "$T/fuzz.out" | head -n 20)"

finish
