#!/bin/bash
# test_usability.sh - command-line tests of what a new user meets first
# (issue 16): each command's own --help (synopsis, options with defaults,
# exit statuses, an example) and the man page made from the same text;
# `closures coefficients` lists the basis terms, `closures NAME` suggests a
# near name, the closures table's columns line up; `describe` on a twin
# config and its warnings; log lines said once; sweep [common] and --list;
# the NetCDF coordinates' units and integer steps.
#
# Environment: TWINGYRE (the program; default /tmp/twingyre), TG_SRCDIR,
# PYTHON (default /usr/bin/python3), TG_TEST_TMPDIR (scratch directory).
#
# Prints "ok - ..." or "FAIL - ..." per check and as its last line
# "N passed, M failed"; exits 0 only when no check failed.
#
# Part of twingyre. GPL-3.0-or-later.

set -u

. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
tg_scratch usability
tg_need_program

# ---------------------------------------------------------------- help
for c in run describe closures twin fit vet sweep; do
    tg "$c" --help
    good=0
    [ "$rc" -eq 0 ] && has "usage: twingyre $c" "$T/out" && has "exit status:" "$T/out" &&
        has "example:" "$T/out" && ! has "commands:" "$T/out" || good=1
    check "$c --help prints the command's own help (usage, exit status, example)" $good \
        "$(head -3 "$T/out")"
done
tg fit --help
has "--method ols|ridge|sequential-threshold|rvm" "$T/out" && has "--drop-below C" "$T/out" && has "[ols]" "$T/out" && has "[4]" "$T/out"
check "fit --help lists every option with its default" $? "$(cat "$T/out")"
tg help vet
has "usage: twingyre vet" "$T/out" && has "  9  " "$T/out"
check "help vet is vet --help, with exit status 9" $? "$(head -3 "$T/out")"
tg --help
n=$(grep -cE '^  (run|describe|closures|twin|fit|vet|sweep) ' "$T/out")
[ "$rc" -eq 0 ] && [ "$n" -eq 7 ] && ! has "--chunk-samples" "$T/out"
check "the global help lists the 7 commands one line each" $? "$(cat "$T/out")"
has "fit's --out is the one file it writes" "$T/out" && has "except in sweep" "$T/out"
check "the global help states the --out and --threads rules and their exceptions" $?
tg help-man
has ".TH TWINGYRE 1" "$T/out" && has ".SS twingyre vet" "$T/out" &&
    has "\\-\\-chunk\\-samples" "$T/out"
check "help-man prints a man page with every command's options" $? "$(head -5 "$T/out")"
if [ -f "$TG_BUILDDIR/twingyre.1" ]; then
    cmp -s "$T/out" "$TG_BUILDDIR/twingyre.1"
    check "the built twingyre.1 is help-man's output" $?
fi

# ---------------------------------------------------------------- closures
tg closures coefficients
n=0
for t in zeta lap_zeta lap2_zeta lap_q lap2_q jac_psi_lapzeta jac_psi_lapq jac_zeta_lapzeta \
    div_gradu_gradzeta div_gradu_gradq curl_div_zeta_deform div_absgradzeta_gradzeta \
    div_strain_gradzeta; do
    grep -qE "^    $t " "$T/out" && n=$((n + 1))
done
nall=$(sed -n '/basis terms (/,/^$/p' "$T/out" | grep -cE '^    [a-z]')
[ "$n" -eq 13 ] && [ "$nall" -eq 14 ] && ! has "curl_div_gradu_gradu" "$T/out"
check "closures coefficients lists the 13 basis terms (no two equal on the grid)" $? \
    "$n found, $nall lines" "$(cat "$T/out")"
tg closures leit
[ "$rc" -eq 1 ] && has "did you mean leith?" "$T/err"
check "closures leit suggests leith" $? "$(err_tail)"
tg closures
# The "default" column starts at the same place on every parameter line.
cols=$(grep -E '^  \[' "$T/out" | awk '{ print index($0, " default ") }' | sort -u | wc -l)
[ "$rc" -eq 0 ] && [ "$cols" -eq 1 ]
check "the closures table's columns line up" $? "$cols different columns" \
    "$(grep -E '^  \[' "$T/out" | head -5)"

# ---------------------------------------------------------------- describe
tg describe "$TG_SRCDIR/configs/twin-demo.ini"
[ "$rc" -eq 0 ] && has "1. reference spin-up" "$T/out" && has "21600 steps of 2160 s" "$T/out" &&
    has "4320 steps of 3600 s on 33 points" "$T/out" &&
    has "; derived scales of the coarse grid" "$T/out" && ! grep -qE '^;   steps ' "$T/out"
check "describe of a twin config shows its phases, step counts and the coarse grid" $? \
    "$(grep '^;' "$T/out" | tail -30)" "$(err_tail)"
small=$TG_SRCDIR/tests/cli/configs/small33.ini
tg describe "$small" --set dissipation.viscosity_m2_per_s=5000
[ "$rc" -eq 0 ] && ! has "warning" "$T/out"
check "describe of a sound config warns about nothing" $? "$(grep warning "$T/out")"
tg describe "$small" --set time.step_s=40000 --set time.duration_days=40000
[ "$rc" -eq 0 ] && has "a current of 1 m/s gives CFL" "$T/out" && has "above max_cfl" "$T/out"
check "describe warns about a CFL above max_cfl at 1 m/s" $? "$(grep warning "$T/out")" "$(err_tail)"
tg describe "$small" --set dissipation.viscosity_m2_per_s=10
[ "$rc" -eq 0 ] && has "the Munk layer" "$T/out" && has "below about 2 the western" "$T/out"
check "describe warns about a Munk layer under 2 grid spacings" $? "$(grep warning "$T/out")"
tg describe "$small" --set dissipation.viscosity_m2_per_s=2e5
[ "$rc" -eq 0 ] && has "above the explicit stability limit of" "$T/out" && has "harmonic viscosity" "$T/out"
check "describe warns about a step above the diffusive limit" $? "$(grep warning "$T/out")"

# ---------------------------------------------------------------- logs
# One layer, 33 points over 1280 km (dx = 40 km), short spin-up and window.
base() { one_layer_basin; }
# vet_config USE [LINES...]: the base with [closure] use = USE, the given
# lines and a short [vet] battery (one step factor, one multiplier).
vet_config() {
    base
    printf '\n[closure]\nuse = %s\n' "$1"
    shift
    printf '%s\n' "$@"
    printf '\n[vet]\nspinup_days = 4\nwindow_days = 2\nstep_factors = 2\nmultipliers = 2\n'
    printf 'finer_grid = no\n'
}
cat >coef.txt <<'EOC'
# units: coefficient in s-2 per term unit
1 lap_zeta 50
1 lap2_zeta -1e9
EOC
vet_config coefficients '' '[coefficients]' 'file = coef.txt' >coef.ini
tg vet coef.ini --out vc
n=$(grep -c "coefficients: layer 1 lap_zeta" "$T/err")
[ "$rc" -eq 0 ] && [ "$n" -eq 1 ]
check "vet says a coefficients file's lines once, not once per online run" $? \
    "$n times" "$(err_tail)"
! has "noise frozen" "$T/out" && ! grep -q stochastic_noise vc/vet.json
check "vet of a closure without noise says nothing about frozen noise" $? "$(tail -5 "$T/out")"
vet_config stochastic_additive >stoch.ini
tg vet stoch.ini --out vs
has "noise frozen" "$T/out" && grep -q stochastic_noise vs/vet.json
check "vet of a stochastic closure says its noise was frozen" $? "$(err_tail)"
# A closure unstable at every multiplier (negative viscosity): the margin
# says "below the smallest multiplier tried", the online rows give the day.
printf '%s\n1 lap_zeta -20000\n' "# units: coefficient in s-2 per term unit" >antivisc.txt
sed -e 's/^file = coef.txt/file = antivisc.txt/' -e 's/^multipliers = 2/multipliers = 0.5, 2/' \
    coef.ini >antivisc.ini
tg vet antivisc.ini --out va
row=$(grep "largest stable coefficient multiplier" "$T/out")
online=$(grep "online run at the configured step" "$T/out")
[ "$rc" -eq 9 ] && has "below the smallest multiplier tried, x0.5" "$T/out" &&
    echo "$row" | grep -q " <0.5 " && echo "$online" | grep -qE " [0-9.]+ (day|-) " &&
    ! sed -n '/^verdicts/,$p' "$T/out" | grep -qE " (0|-) [-a-z]"
check "vet of a closure unstable even at x0.5 says so, with figures in every failed row" $? \
    "exit $rc" "$row" "$online"
base >basin.ini
tg run basin.ini --out rb --set time.duration_days=2 --set output.log_every_days=1
[ "$rc" -eq 0 ] && has "energy" "$T/err" && ! has "mean flow" "$T/err" && has "wind " "$T/err"
check "a basin run's summary line has no mean flow term" $? "$(err_tail)"

# NetCDF: the index coordinates have units "1" (CF), step is an integer.
tg run "$TG_SRCDIR/tests/cli/configs/small33.ini" --out r2 --set time.duration_days=1 --quiet
cat >nc.py <<'EOP'
import sys, netCDF4
bad = []
for f in ("fields.nc", "budget.nc", "checkpoint.nc"):
    with netCDF4.Dataset(sys.argv[1] + "/" + f) as d:
        for c in ("layer", "interface"):
            if c in d.variables and getattr(d.variables[c], "units", None) != "1":
                bad.append(f"{f}: {c} has units {getattr(d.variables[c], 'units', None)!r}")
        if "step" in d.variables and d.variables["step"].dtype.kind != "i":
            bad.append(f"{f}: step is {d.variables['step'].dtype}")
        if f == "budget.nc" and int(d.variables["step"][-1]) != 24:
            bad.append(f"{f}: last step {d.variables['step'][-1]}, not 24")
print("; ".join(bad) if bad else "fine")
sys.exit(1 if bad else 0)
EOP
[ "$rc" -eq 0 ] && py nc.py r2
check "layer and interface have units 1; step is an integer (fields, budget, checkpoint)" $? \
    "$(cat "$T/py" 2>/dev/null)" "$(err_tail)"
tg run "$TG_SRCDIR/tests/cli/configs/small33.ini" --out r3 --set time.duration_days=1e6 \
    --set time.step_s=10
[ "$rc" -eq 2 ] && [ ! -e r3 ]
check "a run longer than the files' step count is a config error, nothing written" $? \
    "$(err_tail)"

# [twin] reference_fields = yes keeps the reference's fine-grid fields.
tiny_twin 2 4 >twinref.ini
tg twin twinref.ini --out tref --quiet --set twin.reference_fields=yes
cat >ref.py <<'EOP'
import sys, netCDF4
with netCDF4.Dataset(sys.argv[1]) as d:
    print(d.variables["psi"].shape, list(d.variables["time"][:]))
    ok = d.variables["psi"].shape == (3, 2, 33, 33) and "q" in d.variables
sys.exit(0 if ok else 1)
EOP
[ "$rc" -eq 0 ] && py ref.py tref/reference/fields.nc
check "[twin] reference_fields = yes writes the reference's psi and q at every sample" $? \
    "$(cat "$T/py" 2>/dev/null)" "$(err_tail)"
# On 65 -> 33 points the offline R2 of none is a tiny negative number
# (it printed as -0.000).
tg twin twinref.ini --out tr65 --quiet --set twin.reference_points=65 \
    --set twin.coarse_points=33 --set grid.points=65
[ "$rc" -eq 0 ] && grep -q "^none " "$T/out" && ! grep -q -- "-0\.000" "$T/out"
check "the twin's skill table prints no -0.000 (the offline R2 of none)" $? "$(cat "$T/out")"

# ---------------------------------------------------------------- sweeps
# [common] overrides every member without entering its name; --list shows
# the members without running them; sweep.lock goes after a clean finish.
cat >sw.ini <<'EOC'
[sweep]
base = basin.ini
directory = swout

[common]
time.duration_days = 1
output.snapshot_every_days = 1

[vary]
dissipation.viscosity_m2_per_s = 300, 600
EOC
tg sweep sw.ini --list
[ "$rc" -eq 0 ] && has "0 viscosity_m2_per_s-300 dissipation.viscosity_m2_per_s=300" "$T/out" &&
    has "1 viscosity_m2_per_s-600" "$T/out" && has "common: time.duration_days=1" "$T/out" &&
    [ ! -e swout ]
check "sweep --list prints the members and their values and runs nothing" $? \
    "$(cat "$T/out")" "$(err_tail)"
tg sweep sw.ini --quiet
[ "$rc" -eq 0 ] && [ -d swout/viscosity_m2_per_s-300 ] &&
    grep -qE '^duration_days = 1 ' swout/viscosity_m2_per_s-600/config.ini
check "[common] keys reach every member and stay out of the names" $? "$(err_tail)" \
    "$(ls swout 2>&1)"
[ ! -e swout/sweep.lock ] && [ -s swout/sweep.csv ]
check "sweep.lock is removed after a clean finish" $? "$(ls swout)"
printf '[sweep]\nbase = basin.ini\n\n[common]\ntime.duration_days = -4\n\n[vary]\nseeds_x.y = 1\n' >swbad.ini
tg sweep swbad.ini --list
[ "$rc" -eq 2 ] && has "swbad.ini:5: [common]" "$T/err"
check "a refused [common] value names the sweep file's line (exit 2)" $? "$(err_tail)"
printf '[sweep]\nbase = basin.ini\n\n[common]\ndissipation.viscosity_m2_per_s = 5\n\n[vary]\ndissipation.viscosity_m2_per_s = 1, 2\n' >swtwice.ini
tg sweep swtwice.ini --list
[ "$rc" -eq 2 ] && has "is varied too" "$T/err"
check "a key both [common] and varied is refused" $? "$(err_tail)"

# scripts/demo keeps the build's output out of its own: a build that fails
# (make -j with a bad count) is reported with the log's path. Only where the
# source tree is configured and writable (not in distcheck's read-only copy).
if [ -f "$TG_SRCDIR/config.status" ] && [ -w "$TG_SRCDIR" ]; then
    TG_SKIP_DEPS=1 TG_MAKE_JOBS=bogus TMPDIR=$T bash "$TG_SRCDIR/scripts/demo" >demo.out 2>demo.err
    drc=$?
    log=$(ls "$T"/twingyre-demo-build.*.log 2>/dev/null | head -1)
    [ "$drc" -ne 0 ] && [ -n "$log" ] && has "$log" demo.err && has "make" "$log" &&
        ! grep -q "^deps:" demo.out
    check "scripts/demo sends the build's output to a log and names it on failure" $? \
        "exit $drc" "$(cat demo.out demo.err | tail -8)"
fi

finish
