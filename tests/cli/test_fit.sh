#!/bin/bash
# test_fit.sh - command-line tests of `twingyre fit`: a tiny twin of an
# invented basin (reference 65 points, coarse 33, 16 days, 9 samples) gives
# a subgrid.nc; every method fits it and writes a coefficients file whose
# header has the documented parts and which a short coarse `twingyre run`
# loads and completes with; the flux target and shared layers work; a twin
# with the fitted file in [twin] compare (path relative to the config
# file's directory, run from another directory) runs it, and its offline
# R^2 on the same samples equals the fit's training R^2 (both are
# 1 - SSE/SST over the same nodes and samples; the definition, common
# practice); a relative [coefficients] file is taken from the config
# file's directory and a relative --set value from the current directory;
# bad options and inputs give clear messages, the documented
# exit statuses, and leave existing files alone.
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
tg_scratch fit
tg_need_program

# ---------------------------------------------------------------- the twin
# tiny_twin (testlib.sh) with a 65-point reference and 33-point coarse runs; the coarse
# runs' physics is repeated in coarse.ini for the plain run below.
mkdir -p "$T/cfg"
tiny_twin 16 16 65 33 >"$T/cfg/twin.ini"
{
    small_basin 33 600 7200
    cat <<'EOF'
duration_days = 5

[initial]
state = noise
noise_amplitude_m2_per_s = 100

[output]
snapshot_every_days = 5
EOF
} >"$T/coarse.ini"
tg twin "$T/cfg/twin.ini" --out "$T/tw" --quiet
check "a tiny twin (65 -> 33 points, 9 samples) writes subgrid.nc" $([ "$rc" -eq 0 ] && [ -s "$T/tw/subgrid.nc" ]; echo $?) "$(err_tail)"
S=$T/tw/subgrid.nc

# ---------------------------------------------------------------- every method
for m in ols ridge sequential-threshold rvm; do
    extra=()
    [ "$m" = ridge ] && extra=(--ridge 1e-4)
    [ "$m" = sequential-threshold ] && extra=(--drop-below 0.05)
    tg fit "$S" --out "$T/$m.txt" --method "$m" --train 0:5 --test 6:8 "${extra[@]}"
    good=1
    [ "$rc" -eq 0 ] || good=0
    for h in "# units: coefficient in s-2 per term unit" "# source: $S" "# method: $m" \
        "# train: samples 0:5 (6 samples" "# test: samples 6:8 (3 samples" "#   lap2_zeta" \
        "R2_train  corr_train     R2_test   corr_test" "# path: backward elimination" \
        "# target: -subgrid_forcing"; do
        has "$h" "$T/$m.txt" || { good=0; echo "missing header part: $h" >>"$T/err"; }
    done
    has "R2_train" "$T/out" || good=0
    check "fit --method $m: exit 0, the skill table on stdout, a file with units, source, method, windows, terms, skill and path" \
        $([ $good -eq 1 ]; echo $?) "$(err_tail)"
    tg run "$T/coarse.ini" --out "$T/run-$m" --quiet --set closure.use=coefficients \
        --set "coefficients.file=$T/$m.txt"
    check "a 5-day coarse run with the $m file completes" \
        $([ "$rc" -eq 0 ] && [ -s "$T/run-$m/fields.nc" ]; echo $?) "$(err_tail)"
done
# The RVM gives a std for every kept coefficient; OLS gives none, and one
# line for each of the 13 terms in each of the 2 layers.
n4=$(grep -v '^#' "$T/rvm.txt" | awk 'NF == 4' | wc -l)
nall=$(grep -v '^#' "$T/rvm.txt" | awk 'NF >= 3' | wc -l)
n3=$(grep -v '^#' "$T/ols.txt" | awk 'NF == 3' | wc -l)
check "rvm lines carry a std column ($n4 of $nall), ols lines none ($n3 lines of 3 fields)" \
    $([ "$n4" -eq "$nall" ] && [ "$nall" -gt 0 ] && [ "$n3" -eq 26 ]; echo $?)
# Sequential thresholding with a large cut-off keeps fewer terms than OLS,
# and its file says which cut-off it used.
tg fit "$S" --out "$T/sparse.txt" --method sequential-threshold --drop-below 0.3 --quiet
ns=$(grep -v '^#' "$T/sparse.txt" | awk 'NF >= 3' | wc -l)
check "sequential-threshold --drop-below 0.3 keeps fewer terms ($ns) than the 26 of ols" \
    $([ "$rc" -eq 0 ] && [ "$ns" -lt 26 ] && [ "$ns" -gt 0 ] && has "# settings: drop below 0.3 (standardized coefficients)" "$T/sparse.txt"; echo $?) "$(err_tail)"
# A file written under the method's old name (the header is comments) still
# runs: rename the method and settings lines the way older versions wrote them.
sed -e 's/^# method: sequential-threshold:/# method: stlsq:/' \
    -e 's/^# settings: drop below \([^ ]*\) (standardized coefficients)/# settings: threshold \1 on standardized coefficients/' \
    "$T/sparse.txt" >"$T/old-name.txt"
tg run "$T/coarse.ini" --out "$T/run-old-name" --quiet --set closure.use=coefficients \
    --set "coefficients.file=$T/old-name.txt"
check "a coefficients file with the old method name in its header still runs" \
    $([ "$rc" -eq 0 ] && has "# method: stlsq:" "$T/old-name.txt" && [ -s "$T/run-old-name/fields.nc" ]; echo $?) "$(err_tail)"

# ---------------------------------------------------------------- options
tg fit "$S" --out "$T/flux.txt" --target flux --layers shared --terms lap_zeta,div_gradu_gradzeta,jac_psi_lapzeta --chunk-samples 2 --quiet
check "--target flux --layers shared --terms ...: 'all' lines for 3 terms, header names the flux target" \
    $([ "$rc" -eq 0 ] && [ "$(grep -c '^all ' "$T/flux.txt")" -eq 3 ] && has "# target: -div(subgrid_flux_x, subgrid_flux_y)" "$T/flux.txt"; echo $?) "$(err_tail)"
tg fit "$S" --out "$T/dump.txt" --terms zeta,lap_zeta --dump-design "$T/design.nc" --quiet
cat >"$T/dump.py" <<'EOF'
import sys
from netCDF4 import Dataset
d = Dataset(sys.argv[1])
assert d.getncattr("terms") == "zeta lap_zeta", d.getncattr("terms")
# 9 samples x 2 layers x 31 x 31 interior nodes
assert d.variables["design"].shape == (9 * 2 * 31 * 31, 2), d.variables["design"].shape
assert d.variables["target"].units == "s-2"
print("ok")
EOF
"$PYTHON" "$T/dump.py" "$T/design.nc" >"$T/py" 2>&1
check "--dump-design writes every training row (9 samples x 2 layers x 31 x 31 nodes) with the term names" $? "$(cat "$T/py")"

# ---------------------------------------------------------------- fit -> twin
cp "$T/ols.txt" "$T/cfg/fitted.txt"
tg fit "$S" --out "$T/cfg/fitted.txt" --overwrite --quiet
sed -e 's/^compare = none/compare = coefficients:fitted.txt, smagorinsky/' "$T/cfg/twin.ini" >"$T/cfg/twin2.ini"
mkdir -p "$T/elsewhere"
(cd "$T/elsewhere" && "$TWINGYRE" twin ../cfg/twin2.ini --out "$T/tw2" --quiet >"$T/out" 2>"$T/err")
rc=$?
check "[twin] compare = coefficients:fitted.txt (relative to the config's directory) runs the fitted file" \
    $([ "$rc" -eq 0 ] && [ -s "$T/tw2/coarse-coefficients-fitted/fields.nc" ] && grep -q '^coefficients-fitted,coarse-coefficients-fitted' "$T/tw2/skill.csv"; echo $?) "$(err_tail)"
cat >"$T/r2.py" <<'EOF'
import csv, sys
rows = [r for r in csv.DictReader(open(sys.argv[1])) if r["closure"] == "coefficients-fitted"]
fit = {}
in_skill = False
for line in open(sys.argv[2]):
    f = line.split()
    if line.startswith("# skill"):
        in_skill = True
    elif line.startswith("# path"):
        in_skill = False
    elif in_skill and len(f) == 6 and f[1] in ("1", "2"):
        fit[f[1]] = float(f[2])
assert len(rows) == 2 and len(fit) == 2, (rows, fit)
for r in rows:
    a, b = float(r["offline_r2"]), fit[r["layer"]]
    assert abs(a - b) < 6e-5, f"layer {r['layer']}: twin offline R2 {a}, fit R2_train {b}"
    print("layer", r["layer"], a, b)
EOF
"$PYTHON" "$T/r2.py" "$T/tw2/skill.csv" "$T/cfg/fitted.txt" >"$T/py" 2>&1
check "the twin's offline R2 of the fitted file equals the fit's training R2 on the same samples (4 decimals)" $? "$(cat "$T/py")"

# A relative [coefficients] file is taken from the config file's directory;
# a relative --set value from the current directory.
{ cat "$T/coarse.ini"; printf '\n[closure]\nuse = coefficients\n\n[coefficients]\nfile = fitted.txt\n'; } >"$T/cfg/coarse-fitted.ini"
tg run "$T/cfg/coarse-fitted.ini" --out "$T/run-rel" --quiet
check "[coefficients] file = fitted.txt in cfg/coarse-fitted.ini, run from another directory, loads cfg/fitted.txt" \
    $([ "$rc" -eq 0 ] && [ -s "$T/run-rel/fields.nc" ]; echo $?) "$(err_tail)"
(cd "$T/cfg" && "$TWINGYRE" run ../coarse.ini --out "$T/run-rel2" --quiet --set closure.use=coefficients \
    --set coefficients.file=fitted.txt >"$T/out" 2>"$T/err")
rc=$?
check "--set coefficients.file=fitted.txt is taken from the current directory" \
    $([ "$rc" -eq 0 ] && [ -s "$T/run-rel2/fields.nc" ]; echo $?) "$(err_tail)"

# ---------------------------------------------------------------- errors
tg fit "$S" --out "$T/x.txt" --bogus
check "an unknown option: exit 1 naming it" $([ "$rc" -eq 1 ] && has "--bogus" "$T/err"; echo $?) "$(err_tail)"
tg fit "$S" --out "$T/x.txt" --method lasso
check "--method lasso: exit 1 naming --method and the choices" $([ "$rc" -eq 1 ] && has "--method: expected ols, ridge, sequential-threshold or rvm" "$T/err"; echo $?) "$(err_tail)"
tg fit "$S" --out "$T/x.txt" --terms lap_zeta,lap_zetta
check "--terms with a misspelt term: exit 1 with 'did you mean lap_zeta?'" $([ "$rc" -eq 1 ] && has "did you mean lap_zeta?" "$T/err"; echo $?) "$(err_tail)"
tg fit "$S" --out "$T/x.txt" --train 0:99
check "--train 0:99 beyond the 9 samples: exit 1 naming --train and the range" $([ "$rc" -eq 1 ] && has "--train 0:99" "$T/err" && has "samples 0 to 8" "$T/err"; echo $?) "$(err_tail)"
tg fit "$S" --out "$T/x.txt" --ridge 0.1
check "--ridge with --method ols: exit 1" $([ "$rc" -eq 1 ] && has "--ridge applies to" "$T/err"; echo $?) "$(err_tail)"
tg fit "$S" --out "$T/no/such/dir/x.txt"
check "--out in a missing directory: exit 3 naming --out before any reading" $([ "$rc" -eq 3 ] && has "--out $T/no/such/dir/x.txt: cannot write in directory" "$T/err"; echo $?) "$(err_tail)"
tg fit "$T/nothing.nc" --out "$T/x.txt"
check "a missing input file: exit 3 naming it" $([ "$rc" -eq 3 ] && has "$T/nothing.nc" "$T/err"; echo $?) "$(err_tail)"
tg fit "$T/run-ols/fields.nc" --out "$T/x.txt"
check "a file that is not subgrid.nc: exit 3 naming the missing variable" $([ "$rc" -eq 3 ] && has "no variable subgrid_forcing" "$T/err"; echo $?) "$(err_tail)"
tg fit "$S" --out "$T/x.txt" --method stlsq
check "--method stlsq (the old spelling): exit 1 with 'did you mean sequential-threshold?'" $([ "$rc" -eq 1 ] && has "did you mean sequential-threshold?" "$T/err"; echo $?) "$(err_tail)"
tg fit "$S" --out "$T/x.txt" --method sequential-threshold --threshold 0.1
check "--threshold (the old spelling): exit 1 with 'did you mean --drop-below?'" $([ "$rc" -eq 1 ] && has "'--threshold'; did you mean --drop-below?" "$T/err"; echo $?) "$(err_tail)"
tg fit "$S" --out "$T/x.txt" --terms zeta --method sequential-threshold --drop-below 1e6
check "a cut-off that removes every term: exit 2 with advice" $([ "$rc" -eq 2 ] && has "lower --drop-below" "$T/err"; echo $?) "$(err_tail)"
[ -e "$T/x.txt" ]
check "failed fits wrote no output file" $([ ! -e "$T/x.txt" ]; echo $?)
before=$(md5sum <"$T/ols.txt")
tg fit "$S" --out "$T/ols.txt"
after=$(md5sum <"$T/ols.txt")
check "an existing output without --overwrite: exit 3, file unchanged" $([ "$rc" -eq 3 ] && has "--overwrite" "$T/err" && [ "$before" = "$after" ]; echo $?) "$(err_tail)"
sed -e 's/^compare = none/compare = coefficients:missing.txt/' "$T/cfg/twin.ini" >"$T/cfg/twin3.ini"
tg twin "$T/cfg/twin3.ini" --out "$T/tw3"
check "[twin] compare with a missing coefficients file: exit 2 naming file:line, the key and the file" \
    $([ "$rc" -eq 2 ] && has "twin3.ini:" "$T/err" && has "compare" "$T/err" && has "missing.txt" "$T/err" && [ ! -e "$T/tw3" ]; echo $?) "$(err_tail)"

finish
