#!/bin/bash
# test_sweep.sh - command-line tests of `twingyre sweep` on this machine:
# the 2 x 2 sweep with the local pool (--jobs 2) gives sweep.csv with four
# rows, the documented columns and member names, figures that match the
# members' budget.nc (recomputed with Debian's python3-netCDF4 from the
# definitions in README, "Sweeps and ensembles"); a member whose value
# blows up and one whose value is refused are recorded as failed while the
# other completes; a sweep stopped with SIGINT after its first member is
# done is resumed by a second run, which skips the finished member; a sweep
# of twins carries their skill metrics into sweep.csv; --member,
# --collect and --slurm-script; bad sweep files are refused with FILE:LINE
# and exit status 2 before anything is written.
#
# Environment: see sweep_common.sh. Prints "ok - ..." or "FAIL - ..." per
# check and "N passed, M failed" last; exits 0 only when no check failed.
#
# Part of twingyre. GPL-3.0-or-later.

set -u
. "$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)/sweep_common.sh"

# ---------------------------------------------------------------- 2 x 2
sweep_local
csv=$T/local/sweep.csv
if [ "$(head -n 1 "$csv")" = "$grid_columns" ]; then
    ok "sweep.csv has the documented columns"
else
    notok "sweep.csv has the documented columns" "got: $(head -n 1 "$csv")" "want: $grid_columns"
fi
rows=$(tail -n +2 "$csv" | wc -l)
ndone=$(tail -n +2 "$csv" | grep -c ',done,0,,')
if [ "$rows" -eq 4 ] && [ "$ndone" -eq 4 ]; then
    ok "sweep.csv has four rows, all done"
else
    notok "sweep.csv has four rows, all done" "$(cat "$csv")"
fi
names=$(tail -n +2 "$csv" | cut -d, -f1,2 | tr '\n' ' ')
want='0,viscosity_m2_per_s-400_seed-1 1,viscosity_m2_per_s-400_seed-2 2,viscosity_m2_per_s-800_seed-1 3,viscosity_m2_per_s-800_seed-2 '
if [ "$names" = "$want" ]; then
    ok "members are numbered in product order (last axis fastest) and named from their values"
else
    notok "members are numbered in product order and named from their values" "got:  $names" "want: $want"
fi
m="$T/local/viscosity_m2_per_s-800_seed-2"
if [ -f "$m/config.ini" ] && [ -f "$m/budget.nc" ] && [ -f "$m/member.ini" ] &&
    grep -Eq '^viscosity_m2_per_s = 800([^0-9]|$)' "$m/config.ini" &&
    grep -Eq '^seed = 2([^0-9]|$)' "$m/config.ini" && grep -q '^status = done$' "$m/member.ini"; then
    ok "each member has its folder with its resolved config.ini, member.ini and output"
else
    notok "each member has its folder with its resolved config.ini, member.ini and output" \
        "$(ls -l "$m" 2>&1)" "$(grep -E '^(viscosity|seed)' "$m/config.ini" 2>&1)"
fi
if grep -q '4 of 4 done, 0 running, 0 failed, 0 left' "$T/err"; then
    ok "one progress line for the whole sweep (done, running, failed, left)"
else
    notok "one progress line for the whole sweep" "$(cat "$T/err")"
fi

# The figures against budget.nc, recomputed from README's definitions.
cat >check_figures.py <<'EOF'
import csv, sys
import numpy as np
from netCDF4 import Dataset
top = sys.argv[1]
worst = 0.0
with open(top + "/sweep.csv", newline="") as f:
    rows = list(csv.DictReader(f))
for r in rows:
    with Dataset("%s/%s/budget.nc" % (top, r["name"])) as d:
        e = np.asarray(d["energy"][:], dtype=float)
        z = np.asarray(d["enstrophy"][:], dtype=float).sum(axis=1)
        res = np.abs(np.asarray(d["energy_residual"][:], dtype=float)).max()
        terms = [n for n in d.variables if n.startswith("energy_") and
                 n not in ("energy_tendency", "energy_residual") and d[n].ndim == 1]
        big = max(np.abs(np.asarray(d[n][:], dtype=float)).max() for n in terms)
        want = {"days": float(d["time"][-1]), "energy_final": e[-1], "energy_mean": e.mean(),
                "enstrophy_final": z[-1], "enstrophy_mean": z.mean(),
                "energy_residual_relative": res / big}
    for k, v in want.items():
        got = float(r[k])
        worst = max(worst, abs(got - v) / max(abs(v), 1e-300))
print("largest relative difference %.3g" % worst)
sys.exit(0 if worst < 1e-8 else 1)
EOF
if "$PYTHON" check_figures.py "$T/local" >py.out 2>&1; then
    ok "figures match budget.nc recomputed with python3-netCDF4 ($(cat py.out))"
else
    notok "figures match budget.nc recomputed with python3-netCDF4" "$(cat py.out)"
fi
e1=$(awk -F, 'NR==2{print $9}' "$csv")
e2=$(awk -F, 'NR==3{print $9}' "$csv")
e3=$(awk -F, 'NR==4{print $9}' "$csv")
if [ -n "$e1" ] && [ "$e1" != "$e2" ] && [ "$e1" != "$e3" ]; then
    ok "the seed and the viscosity reach the runs (different final energies)"
else
    notok "the seed and the viscosity reach the runs" "$e1 $e2 $e3"
fi
if "$PYTHON" -c 'import json,sys; d=json.load(open(sys.argv[1])); m=d["members"]; assert len(m)==4 and all(x["status"]=="done" and x["host"] and x["start"] for x in m) and d["varied"]==["dissipation.viscosity_m2_per_s","initial.seed"]' \
    "$T/local/sweep.json" 2>py.err; then
    ok "sweep.json has the four members with status, host and times"
else
    notok "sweep.json has the four members with status, host and times" "$(cat py.err)"
fi

# ---------------------------------------------------------------- --collect, --member
cp "$csv" first.csv
tg sweep grid.ini --out "$T/local" --collect
if [ "$rc" -eq 0 ] && cmp -s first.csv "$csv"; then
    ok "--collect again gives the same sweep.csv byte for byte"
else
    notok "--collect again gives the same sweep.csv byte for byte" "$(err_tail)"
fi
cp -r "$T/local" "$T/damaged"
rm "$T/damaged/viscosity_m2_per_s-400_seed-2/budget.nc"
tg sweep grid.ini --out "$T/damaged" --collect
if [ "$rc" -eq 0 ] && grep -q 'member 1 (viscosity_m2_per_s-400_seed-2) is done but its figures are left empty' "$T/err" &&
    grep -q '^1,viscosity_m2_per_s-400_seed-2,400,2,done,0,,,,,,,$' "$T/damaged/sweep.csv" &&
    [ "$(sed -n 4p "$T/damaged/sweep.csv")" = "$(sed -n 4p "$csv")" ]; then
    ok "--collect with a done member's budget.nc missing: empty figures, a warning, the other rows intact"
else
    notok "--collect with a done member's budget.nc missing: empty figures, a warning, the other rows intact" \
        "$(err_tail)" "$(cat "$T/damaged/sweep.csv" 2>&1)"
fi
tg sweep grid.ini --out "$T/local" --member 1
if [ "$rc" -eq 0 ] && grep -q 'already done' "$T/err"; then
    ok "--member K of a finished member does nothing (exit 0)"
else
    notok "--member K of a finished member does nothing (exit 0)" "$(err_tail)"
fi
tg sweep grid.ini --out "$T/one" --member 2 --threads 1
if [ "$rc" -eq 0 ] && grep -q '^status = done$' "$T/one/viscosity_m2_per_s-800_seed-1/member.ini" &&
    [ "$(ls "$T/one")" = viscosity_m2_per_s-800_seed-1 ] &&
    "$PYTHON" -c '
import sys
from netCDF4 import Dataset
import numpy as np
a, b = Dataset(sys.argv[1]), Dataset(sys.argv[2])
assert sorted(a.variables) == sorted(b.variables)
for n in a.variables:
    assert np.array_equal(np.asarray(a[n][:]), np.asarray(b[n][:])), n
' "$T/one/viscosity_m2_per_s-800_seed-1/budget.nc" \
        "$T/local/viscosity_m2_per_s-800_seed-1/budget.nc" 2>py.err; then
    ok "--member K runs that member alone, bitwise as in the pool"
else
    notok "--member K runs that member alone, bitwise as in the pool" "$(err_tail)" "$(ls "$T/one" 2>&1)" "$(cat py.err 2>&1)"
fi
tg sweep grid.ini --out "$T/one" --member 4
if [ "$rc" -eq 1 ] && grep -q 'members 0 to 3' "$T/err"; then
    ok "--member beyond the last member is a usage error (exit 1)"
else
    notok "--member beyond the last member is a usage error (exit 1)" "$(err_tail)"
fi

# ---------------------------------------------------------------- failures
cat >fail.ini <<'EOF'
; member 1 blows up (wind stress far too strong), member 2 has a refused value
[sweep]
base = base.ini
combine = zip

[vary]
wind.stress_amplitude_pa = 0.1, 20, 0.1
dissipation.viscosity_m2_per_s = 500, 500, -3
EOF
tg sweep fail.ini --jobs 2 --out "$T/fail"
fcsv=$T/fail/sweep.csv
r0=$(sed -n 2p "$fcsv" 2>/dev/null)
r1=$(sed -n 3p "$fcsv" 2>/dev/null)
r2=$(sed -n 4p "$fcsv" 2>/dev/null)
if [ "$rc" -eq 9 ] && [[ $r0 == *",done,0,,"* ]] && [[ $r1 == *",failed,5,"*CFL* ]] &&
    [[ $r2 == *",failed,2,"*"viscosity_m2_per_s=-3"* ]]; then
    ok "a blow-up (exit 5) and a refused value (exit 2) are recorded as failed, the other member completes, the sweep exits 9"
else
    notok "a blow-up and a refused value are recorded as failed, the other member completes" \
        "$(err_tail)" "$(cat "$fcsv" 2>&1)"
fi
if grep -q 'unstable' "$T/fail/stress_amplitude_pa-20_viscosity_m2_per_s-500/member.log" 2>/dev/null; then
    ok "the failed member's messages are kept in its member.log"
else
    notok "the failed member's messages are kept in its member.log" \
        "$(cat "$T/fail/stress_amplitude_pa-20_viscosity_m2_per_s-500/member.log" 2>&1)"
fi

# ---------------------------------------------------------------- stop and resume
# SIGINT once a member is done and the next one is running (--jobs 1, 150
# days a member: about a second each), so that the stop always falls
# in the middle of a member.
sed 's/^duration_days = 20$/duration_days = 150/' base.ini >base-long.ini
cat >long.ini <<'EOF'
[sweep]
base = base-long.ini

[vary]
dissipation.viscosity_m2_per_s = 400, 500, 600, 700
EOF
"$TWINGYRE" sweep long.ini --jobs 1 --out "$T/long" >long.out 2>long.err &
pid=$!
for _ in $(seq 1 600); do
    if grep -qs '^status = done$' "$T"/long/*/member.ini &&
        grep -qs '^status = running$' "$T"/long/*/member.ini; then
        break
    fi
    sleep 0.1
done
tg sweep long.ini --jobs 1 --out "$T/long"
if [ "$rc" -eq 3 ] && grep -q 'another twingyre sweep is working in' "$T/err"; then
    ok "a second pool in the same folder is refused while the first runs (exit 3)"
else
    notok "a second pool in the same folder is refused while the first runs (exit 3)" "$(err_tail)"
fi
kill -INT "$pid"
wait "$pid"
rc=$?
done1=$(grep -ls '^status = done$' "$T"/long/*/member.ini | sort)
ndone1=$(printf '%s\n' "$done1" | grep -c member.ini)
stopped=$(grep -ls '^status = stopped$' "$T"/long/*/member.ini | wc -l)
if [ "$rc" -eq 6 ] && [ "$ndone1" -ge 1 ] && [ "$ndone1" -lt 4 ] && [ "$stopped" -ge 1 ]; then
    ok "SIGINT after the first member: exit 6, $ndone1 done, the running member recorded as stopped"
else
    notok "SIGINT after the first member: exit 6, some done, the running one stopped" \
        "exit $rc, done: $done1, stopped: $stopped" "$(tail -n 5 long.err)"
fi
starts1=$(for f in $done1; do grep '^start' "$f"; done)
tg sweep long.ini --jobs 2 --out "$T/long"
starts2=$(for f in $done1; do grep '^start' "$f"; done)
ndone2=$(grep -ls '^status = done$' "$T"/long/*/member.ini | wc -l)
if [ "$rc" -eq 0 ] && [ "$ndone2" -eq 4 ] && [ "$starts1" = "$starts2" ] &&
    grep -q "skipping $ndone1 member" "$T/err"; then
    ok "running the sweep again skips the finished members and completes the others"
else
    notok "running the sweep again skips the finished members and completes the others" \
        "$(err_tail)" "before: $starts1" "after:  $starts2"
fi

# kill -9 of the pool itself (a crash of the process that started the
# members): its running member stops too (it follows its parent), records
# itself as stopped, and a re-run completes every member.
"$TWINGYRE" sweep long.ini --jobs 1 --out "$T/long9" >long9.out 2>long9.err &
pid=$!
for _ in $(seq 1 600); do
    if grep -qs '^status = running$' "$T"/long9/*/member.ini; then
        break
    fi
    sleep 0.1
done
kill -KILL "$pid"
wait "$pid" 2>/dev/null
for _ in $(seq 1 300); do
    grep -qs '^status = running$' "$T"/long9/*/member.ini || break
    sleep 0.1
done
nrunning=$(grep -ls '^status = running$' "$T"/long9/*/member.ini | wc -l)
nstopped=$(grep -ls '^status = stopped$' "$T"/long9/*/member.ini | wc -l)
orphans=$(pgrep -f "sweep long.ini --out $T/long9 --member" | wc -l)
tg sweep long.ini --jobs 2 --out "$T/long9"
ndone9=$(grep -ls '^status = done$' "$T"/long9/*/member.ini | wc -l)
if [ "$nrunning" -eq 0 ] && [ "$nstopped" -ge 1 ] && [ "$orphans" -eq 0 ] && [ "$rc" -eq 0 ] &&
    [ "$ndone9" -eq 4 ]; then
    ok "kill -9 of the pool: its running member stops and records it ($nstopped stopped, no orphan); a re-run completes all four"
else
    notok "kill -9 of the pool: its running member stops and records it; a re-run completes all four" \
        "running after the kill: $nrunning, stopped: $nstopped, orphans: $orphans" \
        "$(err_tail)" "$(cat "$T"/long9/*/member.log 2>/dev/null | tail -n 5)"
fi

# ---------------------------------------------------------------- twins
# A twin base (detected from its [twin] section): reference 33 points,
# coarse 17, 10 + 10 days; the coarse viscosity is varied.
{
    small_basin 33
    cat <<'EOF'

[initial]
state = noise
noise_amplitude_m2_per_s = 100
seed = 3

[twin]
reference_points = 33
coarse_points = 17
spinup_days = 10
analysis_days = 10
sample_every_days = 5
compare = smagorinsky

[twin.coarse]
time.step_s = 7200
EOF
} >twin.ini
cat >twins.ini <<'EOF'
[sweep]
base = twin.ini

[vary]
twin.coarse.dissipation.viscosity_m2_per_s = 1000, 2000
EOF
tg sweep twins.ini --jobs 2 --out "$T/twins"
cat >check_twins.py <<'EOF'
import csv, json, sys
top = sys.argv[1]
with open(top + "/sweep.csv", newline="") as f:
    rows = list(csv.DictReader(f))
assert [r["name"] for r in rows] == ["viscosity_m2_per_s-1000", "viscosity_m2_per_s-2000"], rows
assert json.load(open(top + "/sweep.json"))["kind"] == "twin"
for r in rows:
    assert r["status"] == "done", r
    with open("%s/%s/skill.csv" % (top, r["name"]), newline="") as f:
        skill = list(csv.DictReader(f))
    n = 0
    for s in skill:
        run = s["run"].replace(" ", "_")
        assert r["skill_%s_status" % run] == s["status"]
        for k in ("kinetic_energy_ratio", "psi_pattern_correlation", "offline_r2"):
            assert r["skill_%s_layer%s_%s" % (run, s["layer"], k)] == s[k], (run, k)
            n += 1
    assert n == 12, n  # runs none and smagorinsky, two layers, three metrics
print("ok")
EOF
if [ "$rc" -eq 0 ] && "$PYTHON" check_twins.py "$T/twins" >py.out 2>&1; then
    ok "a twin sweep: kind detected, skill.csv metrics of each member in sweep.csv"
else
    notok "a twin sweep: kind detected, skill.csv metrics of each member in sweep.csv" \
        "$(err_tail)" "$(cat py.out)"
fi

# A member's resolved config.ini lists the whole [twin] section at its
# defaults; as a base it stays a run (kind = auto, README "Sweep file
# reference"), while the twin base above sets [twin] keys.
cat >rebase.ini <<EOF
[sweep]
base = $T/local/viscosity_m2_per_s-800_seed-2/config.ini
seeds = 5
EOF
tg sweep rebase.ini --out "$T/rebase"
rm1="$T/rebase/seed-5"
if [ "$rc" -eq 0 ] && [ -f "$rm1/budget.nc" ] && [ ! -e "$rm1/subgrid.nc" ] &&
    "$PYTHON" -c 'import json,sys; assert json.load(open(sys.argv[1]))["kind"] == "run"' \
        "$T/rebase/sweep.json" && ! grep -q 'members are twins' "$T/err"; then
    ok "a resolved run config as base (every [twin] key at its default) is swept as runs"
else
    notok "a resolved run config as base is swept as runs" "$(err_tail)" "$(ls "$T/rebase" 2>&1)"
fi

# ---------------------------------------------------------------- Slurm script
tg sweep grid.ini --out "$T/slurm" --slurm-script "$T/job.sh"
if [ "$rc" -eq 0 ] && grep -q '^#SBATCH --array=0-3$' job.sh &&
    grep -q '^#SBATCH --job-name=tg-sweep-test$' job.sh &&
    grep -q '^#SBATCH --time=00:05:00$' job.sh &&
    grep -q '^#SBATCH --partition=tgsweep$' job.sh &&
    grep -q '^#SBATCH --comment=twingyre-sweep-test$' job.sh &&
    grep -q '^echo "setup line of the sweep test ran"$' job.sh &&
    grep -q -- '--member "$SLURM_ARRAY_TASK_ID"' job.sh &&
    grep -q -- '--collect' job.sh.collect &&
    grep -q -- '--dependency=afterany:' job.sh.submit &&
    bash -n job.sh && bash -n job.sh.collect && bash -n job.sh.submit; then
    ok "--slurm-script writes the job array, the collect job and the submit script"
else
    notok "--slurm-script writes the job array, the collect job and the submit script" \
        "$(err_tail)" "$(cat job.sh 2>&1)"
fi

# ---------------------------------------------------------------- bad sweep files
bad() { # name, expected exit status, expected text, file content
    printf '%s\n' "$4" >"$T/$1.ini"
    tg sweep "$1.ini" --out "$T/bad-$1"
    if [ "$rc" -eq "$2" ] && grep -qF -- "$3" "$T/err" && [ ! -e "$T/bad-$1" ]; then
        ok "bad sweep file ($1): exit $2, '$3', nothing written"
    else
        notok "bad sweep file ($1): exit $2, '$3', nothing written" "$(err_tail)"
    fi
}
bad unknown_key 2 "unknown_key.ini:4: [vary] dissipation.viscosty_m2_per_s: no value is accepted" \
    "[sweep]
base = base.ini
[vary]
dissipation.viscosty_m2_per_s = 1, 2"
bad zip_lengths 2 "zip_lengths.ini:6: [vary] time.step_s: combine = zip needs lists of the same length" \
    "[sweep]
base = base.ini
combine = zip
[vary]
dissipation.viscosity_m2_per_s = 100, 200
time.step_s = 1800, 3600, 7200"
bad sweep_key 2 "sweep_key.ini:3: [sweep] unknown key 'seed'" \
    "[sweep]
base = base.ini
seed = 1, 2"
bad empty_value 2 "empty_value.ini:4: [vary] time.step_s: expected a list of values separated by ',', found an empty value (value 2)" \
    "[sweep]
base = base.ini
[vary]
time.step_s = 1800, , 3600"
bad no_base 2 "no_base.ini: [sweep] base is required" \
    "[vary]
time.step_s = 1800, 3600"
bad missing_base 3 "cannot open config file" \
    "[sweep]
base = nowhere.ini
[vary]
time.step_s = 1800, 3600"
bad cluster_time 2 "cluster_time.ini:6: [cluster] time_limit: expected a duration" \
    "[sweep]
base = base.ini
[vary]
time.step_s = 1800, 3600
[cluster]
time_limit = one hour"

finish
