#!/bin/bash
# test_resume.sh - budget records survive a kill -9 and a resume: a run with
# checkpoints more frequent than its snapshots is killed (-9) after its
# first checkpoint; its budget.nc already reaches the checkpoint's step; the
# run resumed from that checkpoint in the same folder continues budget.nc
# and fields.nc, and both then equal the uninterrupted run's bitwise (every
# step exactly once). Restart consistency: common practice. A budget.nc
# missing steps before the checkpoint is refused.
#
# Environment: TWINGYRE (the program; default /tmp/twingyre), TG_SRCDIR,
# PYTHON (default /usr/bin/python3, Debian's, with numpy and netCDF4),
# TG_TEST_TMPDIR (scratch directory).
#
# Prints "ok - ..." or "FAIL - ..." per check and as its last line
# "N passed, M failed"; exits 0 only when no check failed.
#
# Part of twingyre. GPL-3.0-or-later.

set -u

. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
bg_pid=""
kill_bg() { [ -n "$bg_pid" ] && kill -9 "$bg_pid" 2>/dev/null; }
tg_cleanup_hooks+=(kill_bg)
tg_scratch resume
tg_need_program
SMALL=$TG_SRCDIR/tests/cli/configs/small33.ini
# 1440 steps of 3600 s; a checkpoint every 48 steps, a snapshot every 168.
SET=(--set time.duration_days=60 --set output.checkpoint_every_days=2
    --set output.snapshot_every_days=7)

cat >"$T/cmp.py" <<'PYEOF'
import sys
import numpy as np
import netCDF4

cmd = sys.argv[1]
if cmd == "steps":      # budget.nc's last step and the checkpoint's step
    with netCDF4.Dataset(sys.argv[2]) as b, netCDF4.Dataset(sys.argv[3]) as c:
        s = np.asarray(b["step"][:])
        print(int(s[-1]) if s.size else -1, int(c["step"][...]))
    sys.exit(0)
# same A B: every variable bitwise equal, and budget steps 1..N once each
bad = []
with netCDF4.Dataset(sys.argv[2]) as a, netCDF4.Dataset(sys.argv[3]) as b:
    for n, v in a.variables.items():
        v.set_auto_maskandscale(False)
        w = b[n]
        w.set_auto_maskandscale(False)
        x, y = np.asarray(v[...]), np.asarray(w[...])
        if x.shape != y.shape or x.tobytes() != y.tobytes():
            bad.append("%s %s vs %s" % (n, x.shape, y.shape))
    if "step" in b.variables and b["step"].dimensions == ("time",):
        s = np.asarray(b["step"][:])
        if not np.array_equal(s, np.arange(1, s.size + 1)):
            bad.append("steps are not 1..%d once each" % s.size)
print("; ".join(bad) if bad else "equal")
sys.exit(1 if bad else 0)
PYEOF

tg run "$SMALL" --out "$T/whole" --quiet "${SET[@]}"
check "the uninterrupted run (60 days) completes" $([ "$rc" -eq 0 ]; echo $?) "$(err_tail)"

"$TWINGYRE" run "$SMALL" --out "$T/k" --quiet "${SET[@]}" >"$T/k.out" 2>"$T/k.err" &
bg_pid=$!
tries=600
while [ ! -e "$T/k/checkpoint.nc" ] && [ "$tries" -gt 0 ] && kill -0 "$bg_pid" 2>/dev/null; do
    sleep 0.05
    tries=$((tries - 1))
done
kill -9 "$bg_pid" 2>/dev/null
{ wait "$bg_pid"; } 2>/dev/null
krc=$?
bg_pid=""
py "$T/cmp.py" steps "$T/k/budget.nc" "$T/k/checkpoint.nc"
read -r bstep cstep <"$T/py"
check "kill -9 after the first checkpoint (exit 137): budget.nc reaches the checkpoint's step ($bstep >= $cstep)" \
    $([ "$krc" -eq 137 ] && [ -n "${cstep:-}" ] && [ "$bstep" -ge "$cstep" ]; echo $?) \
    "exit $krc; $(cat "$T/py")"

tg run "$SMALL" --out "$T/k" --quiet "${SET[@]}" --set "initial.state=$T/k/checkpoint.nc"
check "the run resumed from its own checkpoint in its folder completes (exit 0)" \
    $([ "$rc" -eq 0 ]; echo $?) "$(err_tail)"
for f in budget.nc fields.nc; do
    py "$T/cmp.py" same "$T/whole/$f" "$T/k/$f"
    check "after kill -9 and resume, $f equals the uninterrupted run's bitwise" $? "$(cat "$T/py")"
done
check "no temporary files remain" $(ls "$T/k" | grep -q '\.tmp$'; [ $? -ne 0 ]; echo $?) \
    "$(ls "$T/k")"

# A budget.nc whose records end before the checkpoint's step (here one of a
# 3-day run beside a day-10 checkpoint) is refused, and the folder is left
# as it was (fields.nc included).
tg run "$SMALL" --out "$T/gap" --quiet
tg run "$SMALL" --out "$T/short" --quiet --set time.duration_days=3
cp "$T/short/budget.nc" "$T/gap/budget.nc"
before=$(dir_state "$T/gap")
tg run "$SMALL" --out "$T/gap" --quiet --set time.duration_days=12 \
    --set "initial.state=$T/gap/checkpoint.nc"
check "resume in place with a budget.nc ending at step 72 before the checkpoint's 240: exit 3, says so, folder unchanged" \
    $([ "$rc" -eq 3 ] && has "records end at step 72" "$T/err" &&
        [ "$(dir_state "$T/gap")" = "$before" ]; echo $?) "$(err_tail)"

finish
