#!/bin/bash
# test_config_checks.sh - command-line tests of the one config validation
# (src/files/config_check.c, tg_config_validate) as the user meets it:
#
#   - `describe` refuses the twin and vet mistakes that `twin` and `vet`
#     refuse (issues 16 and 17), with the same message and exit status 2,
#     and both commands give that message too;
#   - values that used to pass the check and break the run (issue 17) are
#     refused at config time, exit 2, with the key named;
#   - defaults follow other keys (issue 16): a one-layer config without
#     reduced gravity and a periodic config without [wind] describe and run;
#   - an unknown section's message lists [closure]; an unused closure
#     section is warned about once; describe's resolved config and a sweep
#     member's config.ini read back without warnings;
#   - a sweep file with a repeated one-value key or a NUL byte is refused.
#
# These checks rest on the config interface's own specification (common
# practice), not on published results.
#
# Environment: TWINGYRE, TG_SRCDIR, TG_TEST_TMPDIR (see Makefile.am).
# Prints "ok - ..." or "FAIL - ..." per check and "N passed, M failed" last.
#
# Part of twingyre. GPL-3.0-or-later.

set -u
. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
tg_scratch config-checks
tg_need_program

small_basin 33 >base.ini
cat >>base.ini <<EOF
duration_days = 2
[output]
snapshot_every_days = 1
EOF

# refused NAME EXIT TEXT ARGS...: the command exits EXIT and its stderr
# holds TEXT.
refused() {
    local name=$1 want=$2 text=$3
    shift 3
    tg "$@"
    if [ "$rc" -eq "$want" ] && has "$text" "$T/err"; then
        ok "$name"
    else
        notok "$name" "wanted exit $want and '$text'" "$(err_tail)"
    fi
}

# ---------------------------------------------------------------- one path
for case in "twin.coarse_points=45|a basin needs 2^k + 1 points" \
    "twin.coarse.grid.points=65|cannot be overridden" \
    "twin.compare=smagorinsky,leit|did you mean leith?" \
    "twin.sample_every_days=7|[twin] analysis_days" \
    "initial.state=/etc/passwd|is not a netCDF file"; do
    set_arg=${case%%|*}
    text=${case#*|}
    want=2
    [ "$set_arg" = "initial.state=/etc/passwd" ] && want=3
    refused "describe --set $set_arg is refused (exit $want)" $want "$text" \
        describe base.ini --set "$set_arg"
    refused "twin --set $set_arg is refused the same way" $want "$text" \
        twin base.ini --set "$set_arg" --out "$T/twin-out" --quiet
    [ ! -e "$T/twin-out" ] || notok "twin --set $set_arg wrote nothing" "$(ls "$T/twin-out")"
done
refused "describe --set vet.required_margin=8 (a vet config) is refused" 2 \
    "[vet] multipliers (4), got 8" describe base.ini --set closure.use=smagorinsky \
    --set vet.required_margin=8
refused "vet --set vet.required_margin=8 is refused the same way" 2 \
    "[vet] multipliers (4), got 8" vet base.ini --set closure.use=smagorinsky \
    --set vet.required_margin=8 --out "$T/vet-out" --quiet
printf '%s\n[twin.coarse]\ngrid.points = nan\n' "$(cat base.ini)" >nan.ini
refused "describe: [twin.coarse] grid.points = nan is refused with file:line" 2 \
    "nan.ini:24: [twin.coarse] grid.points: cannot be overridden" describe nan.ini

# ---------------------------------------------------------------- issue 17 values
for case in "time.duration_days=1e308" "time.step_s=1e-300" \
    "planet.coriolis_f0_per_s=-1e308" "planet.coriolis_f0_per_s=1e-300" \
    "planet.beta_per_m_per_s=65537" "planet.coriolis_f0_per_s=1.8e19" \
    "dissipation.viscosity_m2_per_s=1e308"; do
    refused "run --set $case is refused at config time (exit 2)" 2 "--set $case: expected" \
        run base.ini --set "$case" --out "$T/r" --quiet
done
refused "a run of more than 1e9 steps is refused (exit 2)" 2 "steps; at most 1e+09" \
    describe base.ini --set time.step_s=0.001 --set time.duration_days=100000
printf '[closure]\nuse = ,,,\n' >>base_use.ini
cat base.ini base_use.ini >use.ini
refused "[closure] use = ,,, is refused, not read as none" 2 \
    "use.ini:24: [closure] use: an empty name in the list" describe use.ini
printf '[grid] trailing\npoints = 33\n' >hdr.ini
refused "a section header with trailing text is refused" 2 \
    "hdr.ini:1: [grid]: unexpected text after the section header" describe hdr.ini

# ---------------------------------------------------------------- issue 16 defaults
cat >one.ini <<EOF
[grid]
points = 33
size_km = 1000
[layers]
thickness_m = 4000
[time]
step_s = 3600
duration_days = 1
EOF
tg describe one.ini
check "a one-layer config without reduced_gravity_m_s2 describes (exit 0)" "$rc" "$(err_tail)"
tg run one.ini --out "$T/one" --quiet
check "... and runs (exit 0)" "$rc" "$(err_tail)"
cat >per.ini <<EOF
[grid]
geometry = periodic
size_km = 1000
points = 32
[time]
step_s = 3600
duration_days = 1
EOF
tg describe per.ini
if [ "$rc" -eq 0 ] && grep -q "^profile = none" "$T/out"; then
    ok "a periodic config without [wind] describes with profile = none"
else
    notok "a periodic config without [wind] describes with profile = none" "$(err_tail)"
fi
refused "three layers without reduced_gravity_m_s2: asked for, not a default's error" 2 \
    "has a default only for 1 layer (none) and 2 layers (0.02)" \
    describe one.ini --set "layers.thickness_m=500, 1000, 2500"

# ---------------------------------------------------------------- messages and warnings
printf '[qqqqqqqq]\n' >sec.ini
refused "the list of sections names [closure]" 2 "[closure]" describe sec.ini
cat base.ini >unused.ini
printf '[leith]\ncoefficient = 1\n' >>unused.ini
tg describe unused.ini
n=$(grep -c "is ignored" "$T/err")
if [ "$rc" -eq 0 ] && [ "$n" -eq 1 ] && has "unused.ini:24: [leith] is ignored" "$T/err"; then
    ok "an unused closure section is warned about once, with file:line"
else
    notok "an unused closure section is warned about once, with file:line" "$n warnings" \
        "$(err_tail)"
fi
cp "$T/out" resolved.ini
tg describe resolved.ini
if [ "$rc" -eq 0 ] && [ ! -s "$T/err" ]; then
    ok "describe's resolved config reads back without a warning"
else
    notok "describe's resolved config reads back without a warning" "$(err_tail)"
fi
tg describe base.ini --set initial.noise_amplitude_m2_per_s=5 --set grid.wall_slip_coefficient=0.3
cp "$T/out" resolved2.ini
n=$(grep -c "ignored unless" "$T/err")
tg describe resolved2.ini
if [ "$n" -eq 2 ] && [ "$rc" -eq 0 ] && ! has "ignored" "$T/err"; then
    ok "ignored-unless warnings: once each for the user's keys, none on the resolved config"
else
    notok "ignored-unless warnings: once each for the user's keys, none on the resolved config" \
        "$n warnings first" "$(err_tail)"
fi

# ---------------------------------------------------------------- sweep files
printf '[sweep]\nbase = base.ini\ndirectory = a\ndirectory = b\n[vary]\ntime.step_s = 1800, 3600\n' \
    >twice.sweep.ini
refused "a sweep file's repeated directory is refused (was last-wins)" 2 \
    "twice.sweep.ini:4: [sweep] directory: set twice, on line 3 and again on line 4" \
    sweep twice.sweep.ini --quiet
printf '[sweep]\nbase = base.ini\nseeds = 7\0, 8, 9\n' >nul.sweep.ini
refused "a NUL byte in a sweep file is refused (was: one member, exit 0)" 2 \
    "nul.sweep.ini:3: contains a NUL byte" sweep nul.sweep.ini --quiet
printf '[sweep]\nbase = base.ini\ndirectory = %s/sw\n[vary]\ndissipation.viscosity_m2_per_s = 300\n' \
    "$T" >ok.sweep.ini
tg sweep ok.sweep.ini --quiet
member=$(find "$T/sw" -name config.ini | head -n 1)
if [ "$rc" -eq 0 ] && [ -n "$member" ]; then
    tg describe "$member"
    if [ "$rc" -eq 0 ] && [ ! -s "$T/err" ]; then
        ok "a sweep member's config.ini reads back without a warning"
    else
        notok "a sweep member's config.ini reads back without a warning" "$(err_tail)"
    fi
else
    notok "the one-member sweep runs" "$(err_tail)"
fi

finish
