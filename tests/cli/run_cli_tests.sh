#!/bin/bash
# run_cli_tests.sh - command-line tests of twingyre: options and exit
# statuses, `describe`, bad configs (message, exit status, nothing written),
# the output files of a good run, refusal to overwrite, bitwise repeatability
# (same seed; 1 and 2 OpenMP threads), bitwise restart from a checkpoint,
# SIGINT/SIGTERM, kill -9, blow-up handling and reading fields.nc with xarray.
#
# Environment: TWINGYRE (the program; default /tmp/twingyre), TG_SRCDIR (top
# of the source tree; default this script's ../..), PYTHON (default
# /usr/bin/python3, Debian's, with numpy, netCDF4 and xarray), TG_TEST_TMPDIR
# (where the scratch directory goes; default $TMPDIR or /tmp).
#
# Prints one line per check, "ok - ..." or "FAIL - ..." (with "#" detail lines
# after a failure), and as its last line "N passed, M failed". Exits 0 only
# when no check failed.
#
# Unless a check says otherwise, runs use one OpenMP thread (OMP_NUM_THREADS=1)
# so that the whole script stays short on a busy machine; the thread check
# runs with 1 and with 2.
#
# Part of twingyre. GPL-3.0-or-later.

set -u

. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
CFG=$TG_SRCDIR/tests/cli/configs
BAD=$TG_SRCDIR/tests/cli/bad

# Background runs still alive at exit are killed (signal tests).
bg_pids=()
kill_bg() {
    local p
    for p in "${bg_pids[@]}"; do
        kill -9 "$p" 2>/dev/null
    done
}
tg_cleanup_hooks+=(kill_bg)
tg_scratch cli
tg_need_program

# ---------------------------------------------------------------- helpers
# tg, has, ini_get, calc, close_to and dir_state come from testlib.sh.
err_tail_lines=5

# wait_for PID SECONDS COMMAND...: polls COMMAND every 0.1 s until it
# succeeds; returns 1 when the process ends first or the time is up.
wait_for() {
    local pid=$1 tries=$(($2 * 10))
    shift 2
    while [ "$tries" -gt 0 ]; do
        "$@" && return 0
        kill -0 "$pid" 2>/dev/null || return 1
        sleep 0.1
        tries=$((tries - 1))
    done
    return 1
}

# netCDF reading, in Debian's python3 (numpy, netCDF4, xarray).
cat >"$T/nc.py" <<'PYEOF'
"""Helpers of run_cli_tests.sh: read twingyre's netCDF files."""
import sys

import numpy as np
import netCDF4


def raw(ds, name):
    v = ds[name]
    v.set_auto_maskandscale(False)
    return np.array(v[...])


def record_vars(ds):
    return [n for n, v in ds.variables.items() if v.dimensions[:1] == ("time",)]


def same(a, b, names):
    """Bitwise equality of the named variables (or '*': every per-record one)."""
    bad = []
    with netCDF4.Dataset(a) as da, netCDF4.Dataset(b) as db:
        if names == ["*"]:
            names = record_vars(da)
            if sorted(names) != sorted(record_vars(db)):
                bad.append(f"different variables: {sorted(names)} / {sorted(record_vars(db))}")
        if not names:
            bad.append("no variables to compare")
        for n in names:
            x, y = raw(da, n), raw(db, n)
            if x.shape != y.shape:
                bad.append(f"{n}: shapes {x.shape} and {y.shape}")
            elif x.tobytes() != y.tobytes():
                nd = int(np.count_nonzero(x != y))
                bad.append(f"{n}: {nd} of {x.size} values differ, max |diff| "
                           f"{float(np.nanmax(np.abs(x - y))):.3e}")
    for line in bad:
        print(line)
    return 0 if not bad else 1


def restart(u_fields, u_budget, ckpt, b_fields, b_budget):
    """B (restarted from ckpt) equals U (uninterrupted) after the restart."""
    bad = []
    with netCDF4.Dataset(ckpt) as dc:
        s0 = float(raw(dc, "step"))
        t0 = float(raw(dc, "time"))
    with netCDF4.Dataset(u_fields) as du, netCDF4.Dataset(b_fields) as db:
        tu, tb = raw(du, "time"), raw(db, "time")
        later = [i for i in range(tb.size) if tb[i] > t0]
        if not later:
            bad.append(f"restarted fields.nc has no snapshot after day {t0}: times {tb}")
        for i in later:
            j = np.nonzero(tu == tb[i])[0]
            if j.size != 1:
                bad.append(f"day {tb[i]}: not in the uninterrupted run (times {tu})")
                continue
            for n in ("psi", "q"):
                if raw(du, n)[j[0]].tobytes() != raw(db, n)[i].tobytes():
                    bad.append(f"{n} at day {tb[i]} differs")
    with netCDF4.Dataset(u_budget) as du, netCDF4.Dataset(b_budget) as db:
        su, sb = raw(du, "step"), raw(db, "step")
        rows = np.nonzero(su > s0)[0]
        if sb.size == 0 or not np.array_equal(su[rows], sb):
            bad.append(f"budget steps after the restart: uninterrupted {su[rows][:3]}..{su[-1:]} "
                       f"({rows.size}), restarted {sb[:3]}..{sb[-1:]} ({sb.size})")
        else:
            for n in record_vars(db):
                if n not in du.variables:
                    bad.append(f"budget variable {n} missing in the uninterrupted run")
                elif raw(du, n)[rows].tobytes() != raw(db, n).tobytes():
                    bad.append(f"budget {n} differs after the restart")
    for line in bad:
        print(line)
    return 0 if not bad else 1


def ckpt_equals_record(ckpt, fields):
    """The checkpoint's psi and q equal the fields.nc record at its time."""
    with netCDF4.Dataset(ckpt) as dc, netCDF4.Dataset(fields) as df:
        t = float(raw(dc, "time"))
        j = np.nonzero(raw(df, "time") == t)[0]
        if j.size != 1:
            print(f"no fields.nc record at day {t}")
            return 1
        for n in ("psi", "q"):
            if raw(dc, n).tobytes() != raw(df, n)[j[0]].tobytes():
                print(f"{n} of the checkpoint differs from the record at day {t}")
                return 1
    return 0


def info(path, what):
    """Prints a scalar or the values of a variable, or a record count."""
    with netCDF4.Dataset(path) as d:
        if what == "nrec":
            print(len(d.dimensions["time"]))
        else:
            print(" ".join(repr(float(x)) for x in raw(d, what).ravel()))
    return 0


def ckpt_ok(path):
    """The checkpoint opens and its psi and q are finite; prints its step."""
    with netCDF4.Dataset(path) as d:
        fin = all(bool(np.isfinite(raw(d, n)).all()) for n in ("psi", "q"))
        print(int(raw(d, "step")))
        return 0 if fin else 1


def killed(path):
    """A fields.nc of a killed run: opens with netCDF4 and with xarray and
    holds at least one record whose psi and q are all finite."""
    import xarray as xr
    with netCDF4.Dataset(path) as d:
        n = len(d.dimensions["time"])
        psi, q = raw(d, "psi"), raw(d, "q")
        good = [k for k in range(n) if np.isfinite(psi[k]).all() and np.isfinite(q[k]).all()]
    with xr.open_dataset(path) as ds:
        nx = ds.sizes["time"]
        xfin = bool(np.isfinite(ds["psi"].isel(time=0).values).all()) if nx else False
    print(f"{n} records, {len(good)} with finite psi and q; xarray sees {nx} records")
    return 0 if n >= 1 and good and good[0] == 0 and nx == n and xfin else 1


def xr_time(path, snap_days, nrec):
    """fields.nc opens with xarray; time decodes to dates one snapshot apart."""
    import datetime
    import xarray as xr
    snap, nrec = float(snap_days), int(nrec)
    bad = []
    with xr.open_dataset(path) as ds:
        t = ds["time"].values
        if t.size != nrec:
            bad.append(f"{t.size} time values, expected {nrec}")
        if t.size and not (hasattr(t[0], "calendar") or t.dtype.kind == "M"):
            bad.append(f"time did not decode to dates: {t[:2]!r}")
        elif t.size > 1:
            want = datetime.timedelta(days=snap)
            steps = [t[k + 1] - t[k] for k in range(t.size - 1)]
            steps = [s if isinstance(s, datetime.timedelta) else s.astype("timedelta64[us]").item()
                     for s in steps]
            if any(s != want for s in steps):
                bad.append(f"time steps {steps[:3]} ..., expected {want}")
        if ds["psi"].dims != ("time", "layer", "y", "x"):
            bad.append(f"psi dims {ds['psi'].dims}")
        if not np.isfinite(ds["q"].values).all():
            bad.append("q has non-finite values")
    for line in bad:
        print(line)
    return 0 if not bad else 1


def main(argv):
    cmd, args = argv[1], argv[2:]
    if cmd == "same":
        return same(args[0], args[1], args[2:])
    if cmd == "restart":
        return restart(*args)
    if cmd == "ckpt_equals_record":
        return ckpt_equals_record(*args)
    if cmd == "info":
        return info(*args)
    if cmd == "ckpt_ok":
        return ckpt_ok(*args)
    if cmd == "killed":
        return killed(*args)
    if cmd == "xr_time":
        return xr_time(*args)
    print(f"nc.py: unknown command {cmd}")
    return 2


if __name__ == "__main__":
    try:
        sys.exit(main(sys.argv))
    except Exception as exc:  # a failed read is a failed check, with the reason
        print(f"{type(exc).__name__}: {exc}")
        sys.exit(1)
PYEOF

# nc ARGS...: runs nc.py; its stdout in $T/py.
nc() { "$PYTHON" "$T/nc.py" "$@" >"$T/py" 2>&1; }

if "$PYTHON" -c 'import numpy, netCDF4, xarray' >"$T/py" 2>&1; then
    ok "$PYTHON imports numpy, netCDF4 and xarray"
else
    notok "$PYTHON imports numpy, netCDF4 and xarray" "$(cat "$T/py")"
fi

SMALL=$CFG/small33.ini
MEDIUM=$CFG/medium65.ini
BLOWUP=$CFG/blowup.ini

# ---------------------------------------------------------------- options

tg --help
if [ "$rc" -eq 0 ] && grep -qw run "$T/out" && grep -qw describe "$T/out"; then
    ok "--help exits 0 and mentions run and describe"
else
    notok "--help exits 0 and mentions run and describe" "$(err_tail)"
fi

tg --version
if [ "$rc" -eq 0 ] && grep -qE '^twingyre [^ ]+$' "$T/out" && [ "$(wc -l <"$T/out")" -eq 1 ]; then
    ok "--version exits 0 and prints 'twingyre VERSION' ($(cat "$T/out"))"
else
    notok "--version exits 0 and prints 'twingyre VERSION'" "$(err_tail)" "stdout: $(cat "$T/out")"
fi

tg
if [ "$rc" -eq 1 ] && has "usage" "$T/err"; then
    ok "no arguments: exit 1 and usage on stderr"
else
    notok "no arguments: exit 1 and usage on stderr" "$(err_tail)"
fi

tg frobnicate "$SMALL"
if [ "$rc" -eq 1 ] && has "frobnicate" "$T/err"; then
    ok "unknown command: exit 1, names the command"
else
    notok "unknown command: exit 1, names the command" "$(err_tail)"
fi

tg run "$SMALL" --out "$T/o_opt" --bogus
if [ "$rc" -eq 1 ] && has "--bogus" "$T/err" && [ ! -e "$T/o_opt" ]; then
    ok "unknown option of run: exit 1, names the option, writes nothing"
else
    notok "unknown option of run: exit 1, names the option, writes nothing" "$(err_tail)"
fi

tg describe "$SMALL" --overwrite
if [ "$rc" -eq 1 ] && has "--overwrite" "$T/err"; then
    ok "run-only option given to describe: exit 1"
else
    notok "run-only option given to describe: exit 1" "$(err_tail)"
fi

tg run "$SMALL" --out "$T/o_opt" --threads 0
if [ "$rc" -eq 1 ] && has "--threads" "$T/err" && [ ! -e "$T/o_opt" ]; then
    ok "--threads 0: exit 1, writes nothing"
else
    notok "--threads 0: exit 1, writes nothing" "$(err_tail)"
fi

tg run "$SMALL" --out "$T/o_opt" --set
if [ "$rc" -eq 1 ] && has "--set" "$T/err" && [ ! -e "$T/o_opt" ]; then
    ok "--set without a value: exit 1, writes nothing"
else
    notok "--set without a value: exit 1, writes nothing" "$(err_tail)"
fi

tg run "$SMALL" "$SMALL" --out "$T/o_opt"
if [ "$rc" -eq 1 ] && [ ! -e "$T/o_opt" ]; then
    ok "two config files: exit 1, writes nothing"
else
    notok "two config files: exit 1, writes nothing" "$(err_tail)"
fi

tg run "$T/no-such-config.ini" --out "$T/o_opt"
if [ "$rc" -eq 3 ] && has "no-such-config.ini" "$T/err" && [ ! -e "$T/o_opt" ]; then
    ok "missing config file: exit 3 (input/output, config.h), names the file, writes nothing"
else
    notok "missing config file: exit 3 (input/output, config.h), names the file, writes nothing" "$(err_tail)"
fi

# ---------------------------------------------------------------- describe

L_KM=$(ini_get "$SMALL" grid size_km)
NPTS=$(ini_get "$SMALL" grid points)
DT=$(ini_get "$SMALL" time step_s)
DAYS=$(ini_get "$SMALL" time duration_days)
SNAP=$(ini_get "$SMALL" output snapshot_every_days)
F0=$(ini_get "$SMALL" planet coriolis_f0_per_s)
BETA=$(ini_get "$SMALL" planet beta_per_m_per_s)
A2=$(ini_get "$SMALL" dissipation viscosity_m2_per_s)
RDRAG=$(ini_get "$SMALL" dissipation bottom_drag_per_s)
H=$(ini_get "$SMALL" layers thickness_m)
H1=${H%%,*}
H2=${H##*,}
GP=$(ini_get "$SMALL" layers reduced_gravity_m_s2)
NSTEPS=$(calc "$DAYS * 86400 / $DT")
NSNAP=$(calc "$DAYS / $SNAP + 1")

tg describe "$SMALL"
cp "$T/out" "$T/describe.out"
missing=""
for w in "deformation radius" "Munk" "Stommel" "grid spacing" "Rossby basin mode period" \
    "CFL at 1 m/s" "memory estimate"; do
    has "$w" "$T/out" || missing="$missing '$w'"
done
if [ "$rc" -eq 0 ] && [ -z "$missing" ]; then
    ok "describe: exit 0, prints deformation radius, Munk, Stommel, grid spacing, Rossby basin mode period, CFL at 1 m/s, memory estimate"
else
    notok "describe: exit 0, prints every derived scale" "missing:$missing" "$(err_tail)"
fi

# scale LABEL: the first number after LABEL on its describe line.
# (the first number standing alone, so "A2" or "(1/3)" in a label do not count).
scale() {
    grep -F -- "$1" "$T/describe.out" | head -n 1 | sed -e 's/^.*'"$(printf '%s' "$1" |
        sed 's/[^A-Za-z0-9 ]/./g')"'//' |
        grep -oE '(^|[[:space:]])[-+]?[0-9]+(\.[0-9]*)?([eE][-+]?[0-9]+)?([[:space:]]|$)' |
        head -n 1 | tr -d '[:space:]'
}

# Common practice: dx = L/(points - 1) with both walls on grid points.
DX_KM=$(calc "$L_KM / ($NPTS - 1)")
got=$(scale "grid spacing")
if close_to "$got" "$DX_KM" 1e-3; then
    ok "describe: grid spacing $got km = size_km/(points-1) (common practice)"
else
    notok "describe: grid spacing = size_km/(points-1) (common practice)" "got '$got', expected $DX_KM"
fi

# Common practice: advective Courant number u dt / dx at u = 1 m/s.
want=$(calc "$DT / ($DX_KM * 1000)")
got=$(scale "CFL at 1 m/s")
if close_to "$got" "$want" 1e-2; then
    ok "describe: CFL at 1 m/s $got = step_s/dx (common practice)"
else
    notok "describe: CFL at 1 m/s = step_s/dx (common practice)" "got '$got', expected $want"
fi

# Two-layer baroclinic deformation radius sqrt(g' H1 H2 / (H1 + H2)) / f0:
# Pedlosky (1987), Geophysical Fluid Dynamics, 2nd ed., two-layer model of
# chapter 6 (section number not checked; from memory).
want=$(calc "sqrt($GP * $H1 * $H2 / ($H1 + $H2)) / ($F0 < 0 ? -$F0 : $F0) / 1000")
got=$(scale "deformation radius, mode 1")
if close_to "$got" "$want" 1e-3; then
    ok "describe: deformation radius $got km = sqrt(g' H1 H2/(H1+H2))/f0 (Pedlosky 1987, ch. 6; from memory)"
else
    notok "describe: deformation radius = sqrt(g' H1 H2/(H1+H2))/f0 (Pedlosky 1987, ch. 6; from memory)" \
        "got '$got' km, expected $want km"
fi

# Munk (1950), "On the wind-driven ocean circulation", J. Meteor. 7, 79-93:
# boundary-layer width (A/beta)^(1/3).
want=$(calc "exp(log($A2 / $BETA) / 3) / 1000")
got=$(scale "Munk layer")
if close_to "$got" "$want" 1e-3; then
    ok "describe: Munk layer $got km = (A2/beta)^(1/3) (Munk 1950)"
else
    notok "describe: Munk layer = (A2/beta)^(1/3) (Munk 1950)" "got '$got' km, expected $want km"
fi

# Stommel (1948), "The westward intensification of wind-driven ocean
# currents", Trans. AGU 29, 202-206: boundary-layer width r/beta.
want=$(calc "$RDRAG / $BETA / 1000")
got=$(scale "Stommel layer")
if close_to "$got" "$want" 2e-3; then
    ok "describe: Stommel layer $got km = r/beta (Stommel 1948)"
else
    notok "describe: Stommel layer = r/beta (Stommel 1948)" "got '$got' km, expected $want km"
fi

# Gravest free barotropic Rossby mode of a square basin of side L:
# omega = beta / (2 K), K^2 = 2 (pi/L)^2; LaCasce (2000), "Baroclinic Rossby
# waves in a square basin", J. Phys. Oceanogr. 30, 3161-3178, barotropic
# basin modes (formula and reference from memory).
want=$(calc "2 * 3.141592653589793 / ($BETA / (2 * sqrt(2) * 3.141592653589793 / ($L_KM * 1000))) / 86400")
got=$(scale "Rossby basin mode period")
if close_to "$got" "$want" 1e-3; then
    ok "describe: gravest Rossby basin mode period $got days = 2 pi / (beta/(2K)) (LaCasce 2000; from memory)"
else
    notok "describe: gravest Rossby basin mode period = 2 pi / (beta/(2K)) (LaCasce 2000; from memory)" \
        "got '$got' days, expected $want days"
fi

# Step limits (src/model/step_limits.h). SSP-RK3 is stable on the negative
# real axis to |lambda| dt = 2.51 (Shu & Osher 1988, J. Comput. Phys. 77,
# 439-471, eq. 2.18's stability polynomial), rounded to 2.5; the five-point
# Laplacian's largest eigenvalue is 8/dx^2 (common practice), so harmonic
# viscosity allows 2.5 dx^2 / (8 A2) and linear drag 2.5 / r; the advective
# limit is target_cfl dx / (1 m/s) (common practice: Courant number).
want=$(calc "2.5 * ($DX_KM * 1000)^2 / (8 * $A2)")
got=$(scale "harmonic viscosity (stability)")
if close_to "$got" "$want" 1e-3; then
    ok "describe: harmonic-viscosity step limit $got s = 2.5 dx^2/(8 A2) (Shu & Osher 1988)"
else
    notok "describe: harmonic-viscosity step limit = 2.5 dx^2/(8 A2) (Shu & Osher 1988)" "got '$got', expected $want"
fi
want=$(calc "2.5 / $RDRAG")
got=$(scale "bottom drag (stability)")
if close_to "$got" "$want" 1e-3; then
    ok "describe: drag step limit $got s = 2.5/r (Shu & Osher 1988)"
else
    notok "describe: drag step limit = 2.5/r (Shu & Osher 1988)" "got '$got', expected $want"
fi
want=$(calc "0.5 * $DX_KM * 1000")
got=$(scale "at |u|+|v| = 1 m/s")
if close_to "$got" "$want" 1e-3 && grep -q "<- binds" "$T/describe.out"; then
    ok "describe: advective step limit $got s = 0.5 dx / (1 m/s), one limit marked as binding"
else
    notok "describe: advective step limit = 0.5 dx / (1 m/s), one marked binding" "got '$got', expected $want"
fi

got=$(scale "memory estimate")
if [ -n "$got" ] && grep -F "memory estimate" "$T/describe.out" | grep -q "MB"; then
    ok "describe: memory estimate printed in MB ($got MB)"
else
    notok "describe: memory estimate printed in MB" "$(grep -F "memory estimate" "$T/describe.out")"
fi

got=$(grep -F "steps" "$T/describe.out" | grep -oE '[0-9]+ *$' | tr -d ' ')
if [ "$got" = "$NSTEPS" ]; then
    ok "describe: steps $got = duration_days * 86400 / step_s"
else
    notok "describe: steps = duration_days * 86400 / step_s" "got '$got', expected $NSTEPS"
fi

# The resolved config is itself a config: reading it back describes the same run.
sed -n '/^; resolved config of/,/^; derived scales/p' "$T/describe.out" | sed '1d;$d' >"$T/resolved.ini"
tg describe "$T/resolved.ini"
if [ "$rc" -eq 0 ] && diff <(sed -n '/^; derived scales/,$p' "$T/describe.out") \
    <(sed -n '/^; derived scales/,$p' "$T/out") >"$T/diff" 2>&1; then
    ok "describe: the printed resolved config reads back to the same derived scales"
else
    notok "describe: the printed resolved config reads back to the same derived scales" \
        "$(err_tail)" "$(head -n 10 "$T/diff")"
fi

tg describe "$SMALL" --set grid.points=65
want=$(calc "$L_KM / 64")
got=$(grep -F "grid spacing" "$T/out" | grep -oE '[0-9]+\.[0-9]+' | head -n 1)
if [ "$rc" -eq 0 ] && close_to "$got" "$want" 1e-3 && grep -qE '^points = 65( |$)' "$T/out"; then
    ok "describe --set grid.points=65: resolved config and grid spacing follow the override"
else
    notok "describe --set grid.points=65: resolved config and grid spacing follow the override" \
        "grid spacing '$got', expected $want" "$(err_tail)"
fi

# Periodic domain: no wall scales; with an imposed shear, the background PV
# gradients and the two-layer critical shear beta g' H2 / f0^2 (Phillips 1954,
# Tellus 6, 273-286; Pedlosky 1987, Geophysical Fluid Dynamics, section 7.11).
TARROW="$TG_SRCDIR/configs/tarrow-32.ini"
tg describe "$TARROW"
cp "$T/out" "$T/describe-periodic.out"
BETA_J=$(ini_get "$TARROW" planet beta_per_m_per_s)
F0_J=$(ini_get "$TARROW" planet coriolis_f0_per_s)
GP_J=$(ini_get "$TARROW" layers reduced_gravity_m_s2)
H_J=$(ini_get "$TARROW" layers thickness_m)
U_J=$(ini_get "$TARROW" background zonal_velocity_m_s)
want=$(calc "$BETA_J * $GP_J * ${H_J##*,} / ($F0_J * $F0_J)")
want_ratio=$(calc "(${U_J%%,*} - (${U_J##*,})) / $want")
got=$(grep -F "critical shear" "$T/out" | sed 's/^.*f0^2//' | grep -oE '[0-9]+\.[0-9]+' | head -n 1)
got_ratio=$(grep -F "critical shear" "$T/out" | sed 's/^.*= //' | grep -oE '[0-9]+\.[0-9]+' | head -n 1)
if [ "$rc" -eq 0 ] && close_to "$got" "$want" 1e-3 && close_to "$got_ratio" "$want_ratio" 1e-2 &&
    ! has "Munk" "$T/out" && ! has "Stommel" "$T/out" && ! has "basin mode" "$T/out" &&
    grep -qE 'PV gradient changes sign +yes' "$T/out"; then
    ok "describe (periodic): critical shear $got m/s (expected $want), ratio $got_ratio, no wall scales"
else
    notok "describe (periodic): critical shear beta g' H2/f0^2 and no wall scales" \
        "got '$got' ratio '$got_ratio', expected $want ratio $want_ratio" "$(cat "$T/out" | tail -n 12)"
fi

# ---------------------------------------------------------------- a good run

tg run "$SMALL" --out "$T/good" --quiet
if [ "$rc" -eq 0 ] && [ -f "$T/good/fields.nc" ] && [ -f "$T/good/budget.nc" ] &&
    [ -f "$T/good/checkpoint.nc" ]; then
    ok "good run: exit 0, writes fields.nc, budget.nc and checkpoint.nc"
else
    notok "good run: exit 0, writes fields.nc, budget.nc and checkpoint.nc" "$(err_tail)" \
        "$(ls -l "$T/good" 2>&1)"
fi

nc info "$T/good/budget.nc" nrec
got=$(cat "$T/py")
if [ "$got" = "$NSTEPS" ]; then
    ok "budget.nc: one record per step ($got)"
else
    notok "budget.nc: one record per step" "got '$got' records, expected $NSTEPS"
fi

nc info "$T/good/budget.nc" step
want=$(seq -s ' ' 1 "$NSTEPS" | sed 's/\([0-9]\+\)/\1.0/g')
if [ "$(cat "$T/py")" = "$want" ]; then
    ok "budget.nc: step runs 1..$NSTEPS"
else
    notok "budget.nc: step runs 1..$NSTEPS" "got: $(head -c 300 "$T/py")"
fi

nc info "$T/good/fields.nc" time
want=$(awk -v n="$NSNAP" -v s="$SNAP" 'BEGIN { for (k = 0; k < n; k++) printf "%s%.1f", k ? " " : "", k * s }')
if [ "$(cat "$T/py")" = "$want" ]; then
    ok "fields.nc: time is 0, $SNAP, ..., $DAYS days (one snapshot every snapshot_every_days)"
else
    notok "fields.nc: time is 0, $SNAP, ..., $DAYS days" "got: $(head -c 300 "$T/py")" "expected: $want"
fi

if nc ckpt_ok "$T/good/checkpoint.nc" && [ "$(cat "$T/py")" = "$NSTEPS" ]; then
    ok "checkpoint.nc: finite psi and q at the last step ($NSTEPS)"
else
    notok "checkpoint.nc: finite psi and q at the last step ($NSTEPS)" "$(cat "$T/py")"
fi

if nc ckpt_equals_record "$T/good/checkpoint.nc" "$T/good/fields.nc"; then
    ok "checkpoint.nc equals the last fields.nc record bitwise"
else
    notok "checkpoint.nc equals the last fields.nc record bitwise" "$(cat "$T/py")"
fi

# Direct xarray check (CF-1.8 time, Eaton et al. 2020, CF conventions 1.8,
# section 4.4; section number from memory).
if nc xr_time "$T/good/fields.nc" "$SNAP" "$NSNAP"; then
    ok "fields.nc opens with xarray; time decodes to dates $SNAP day(s) apart (CF-1.8 sect. 4.4)"
else
    notok "fields.nc opens with xarray; time decodes to dates (CF-1.8 sect. 4.4)" "$(cat "$T/py")"
fi

# ---------------------------------------------------------------- overwrite

before=$(dir_state "$T/good")
tg run "$SMALL" --out "$T/good" --quiet
if [ "$rc" -eq 3 ] && has "already exists" "$T/err" && has "--overwrite" "$T/err" &&
    [ "$(dir_state "$T/good")" = "$before" ]; then
    ok "existing output without --overwrite: exit 3, says so, files untouched"
else
    notok "existing output without --overwrite: exit 3, says so, files untouched" "$(err_tail)"
fi

# Same config and seed twice: bitwise the same data (common practice).
tg run "$SMALL" --out "$T/good2" --quiet
r1=$rc
nc same "$T/good/fields.nc" "$T/good2/fields.nc" psi q time
r2=$?
py2=$(cat "$T/py")
nc same "$T/good/budget.nc" "$T/good2/budget.nc" '*'
r3=$?
if [ "$r1" -eq 0 ] && [ "$r2" -eq 0 ] && [ "$r3" -eq 0 ]; then
    ok "same config and seed twice: fields.nc psi, q and every budget.nc variable bitwise equal"
else
    notok "same config and seed twice: fields.nc psi, q and every budget.nc variable bitwise equal" \
        "$(err_tail)" "$py2" "$(cat "$T/py")"
fi

# --overwrite with a shorter run: the old records must not survive.
half=$(calc "$DAYS / 2")
tg run "$SMALL" --out "$T/good2" --overwrite --quiet --set "time.duration_days=$half"
nb=$(nc info "$T/good2/budget.nc" nrec && cat "$T/py")
nf=$(nc info "$T/good2/fields.nc" nrec && cat "$T/py")
want_b=$(calc "$NSTEPS / 2")
want_f=$(calc "$half / $SNAP + 1")
if [ "$rc" -eq 0 ] && [ "$nb" = "$want_b" ] && [ "$nf" = "$want_f" ]; then
    ok "--overwrite: exit 0, replaces the files (a shorter run leaves $want_b budget and $want_f field records)"
else
    notok "--overwrite: exit 0, replaces the files" "$(err_tail)" \
        "budget records '$nb' (expected $want_b), field records '$nf' (expected $want_f)"
fi

# ---------------------------------------------------------------- bad configs

mkdir -p "$T/existing"
cp "$T/good/fields.nc" "$T/existing/fields.nc"
existing_before=$(dir_state "$T/existing")

# expect_bad NAME LABEL WANT_RC PATTERN... : after a run (rc, $T/err) that
# used --out $T/bad_NAME, checks the exit status, each message pattern and
# that nothing was written.
expect_bad() {
    local name=$1 label=$2 want=$3 p missing=""
    shift 3
    for p in "$@"; do
        has "$p" "$T/err" || missing="$missing
  '$p'"
    done
    if [ "$rc" -eq "$want" ] && [ -z "$missing" ] && [ ! -e "$T/bad_$name" ]; then
        ok "$label: exit $want, message names what is wrong, no output directory created"
    else
        notok "$label: exit $want, message names what is wrong, no output directory created" \
            "$(err_tail)" "missing from the message:$missing" \
            "output directory: $(ls -d "$T/bad_$name" 2>/dev/null || echo absent)"
    fi
}

# expect_untouched NAME WANT_RC: after a run with --out $T/existing --overwrite.
expect_untouched() {
    if [ "$rc" -eq "$2" ] && [ "$(dir_state "$T/existing")" = "$existing_before" ]; then
        ok "$1: an existing output directory (fields.nc, --overwrite) is left untouched"
    else
        notok "$1: an existing output directory (fields.nc, --overwrite) is left untouched" \
            "$(err_tail)" "$(dir_state "$T/existing")"
    fi
}

nbad=0
for f in "$BAD"/*.ini; do
    [ -e "$f" ] || continue
    nbad=$((nbad + 1))
    base=$(basename "$f")
    name=bad/$base
    want_rc=$(sed -n 's/^; expect-exit: *//p' "$f")
    want_line=$(sed -n 's/^; expect-line: *//p' "$f")
    pats=()
    while IFS= read -r p; do
        pats+=("$p")
    done < <(sed -n 's/^; expect: //p' "$f")
    if [ -z "$want_rc" ] || [ -z "$want_line" ] || [ "${#pats[@]}" -eq 0 ]; then
        notok "$name: has expect-exit, expect-line and expect lines"
        continue
    fi
    tg run "$f" --out "$T/bad_$base" --quiet
    expect_bad "$base" "$name" "$want_rc" "$base:$want_line:" "${pats[@]}"
    tg run "$f" --out "$T/existing" --overwrite --quiet
    expect_untouched "$name" "$want_rc"
    tg describe "$f"
    if [ "$rc" -eq "$want_rc" ] && has "$base:$want_line:" "$T/err"; then
        ok "$name: describe fails the same way (exit $want_rc)"
    else
        notok "$name: describe fails the same way (exit $want_rc)" "$(err_tail)"
    fi
done
if [ "$nbad" -ge 10 ]; then
    ok "found $nbad bad configs in tests/cli/bad"
else
    notok "found at least 10 bad configs in tests/cli/bad" "found $nbad in $BAD"
fi

# The closure listing: every registered scheme with its parameters and source.
tg closures
if [ "$rc" -eq 0 ] && has "viscosity_m2_per_s" "$T/out" && has "source:" "$T/out"; then
    ok "closures lists the schemes with their parameters and sources"
else
    notok "closures lists the schemes with their parameters and sources" "$(err_tail)"
fi
tg closures no_such_scheme
if [ "$rc" -eq 1 ] && has "no closure scheme named" "$T/err"; then
    ok "closures NAME with an unknown name: exit 1 and a message"
else
    notok "closures NAME with an unknown name: exit 1 and a message" "$(err_tail)"
fi

# Bad --set assignments.
tg run "$SMALL" --out "$T/bad_set1" --quiet --set time.step_s
expect_bad set1 "--set time.step_s (no '=')" 2 "--set time.step_s" "no '='"
tg run "$SMALL" --out "$T/bad_set2" --quiet --set time.step_s=-60
expect_bad set2 "--set time.step_s=-60 (out of range)" 2 "--set time.step_s=-60" "> 0" "'-60'"
tg run "$SMALL" --out "$T/existing" --overwrite --quiet --set time.step_s=-60
expect_untouched "--set time.step_s=-60" 2
tg run "$SMALL" --out "$T/bad_set3" --quiet --set time.step_sec=60
expect_bad set3 "--set time.step_sec=60 (unknown key)" 2 "time.step_sec" "did you mean" "time.step_s"
tg run "$SMALL" --out "$T/bad_set4" --quiet --set grid.points=64
expect_bad set4 "--set grid.points=64 (not 2^k + 1)" 2 "grid.points" "2^k + 1" "64"
tg run "$SMALL" --out "$T/bad_set5" --quiet --set grid.wall_condition=noslip
expect_bad set5 "--set grid.wall_condition=noslip (bad choice)" 2 "grid.wall_condition" "did you mean no_slip"

# An initial state on another grid: a 33-point checkpoint in a 65-point run.
tg run "$SMALL" --out "$T/bad_grid" --quiet --set grid.points=65 \
    --set "initial.state=$T/good/checkpoint.nc"
expect_bad grid "initial state from a 33-point run in a 65-point run" 2 "$T/good/checkpoint.nc" "33 x 33" "65"
tg run "$SMALL" --out "$T/existing" --overwrite --quiet --set grid.points=65 \
    --set "initial.state=$T/good/checkpoint.nc"
expect_untouched "initial state on another grid" 2

# A checkpoint from beyond the end of the experiment.
tg run "$SMALL" --out "$T/bad_late" --quiet --set "time.duration_days=$half" \
    --set "initial.state=$T/good/checkpoint.nc"
expect_bad late "checkpoint beyond the end of the run" 2 "checkpoint.nc" "step $NSTEPS"

# An initial state file that is not netCDF: a file that cannot be read (exit 3).
tg run "$SMALL" --out "$T/bad_notnc" --quiet --set "initial.state=$SMALL"
expect_bad notnc "initial state that is not a netCDF file" 3 "small33.ini"

# --out naming a regular file: exit 3, the file untouched.
echo "not a directory" >"$T/plainfile"
want=$(md5sum <"$T/plainfile")
tg run "$SMALL" --out "$T/plainfile" --quiet
if [ "$rc" -eq 3 ] && has "plainfile" "$T/err" && [ -f "$T/plainfile" ] &&
    [ "$(md5sum <"$T/plainfile")" = "$want" ]; then
    ok "--out naming a regular file: exit 3, names it, leaves it untouched"
else
    notok "--out naming a regular file: exit 3, names it, leaves it untouched" "$(err_tail)"
fi

# ---------------------------------------------------------------- threads

# OpenMP 1 vs 2 threads: bitwise the same (every reduction has a fixed order;
# common practice for reproducible runs).
OMP_NUM_THREADS=1 tg run "$MEDIUM" --out "$T/th1" --quiet
r1=$rc
OMP_NUM_THREADS=2 tg run "$MEDIUM" --out "$T/th2" --quiet
r2=$rc
nc same "$T/th1/fields.nc" "$T/th2/fields.nc" psi q
r3=$?
py3=$(cat "$T/py")
nc same "$T/th1/budget.nc" "$T/th2/budget.nc" '*'
r4=$?
if [ "$r1" -eq 0 ] && [ "$r2" -eq 0 ] && [ "$r3" -eq 0 ] && [ "$r4" -eq 0 ]; then
    ok "OMP_NUM_THREADS=1 and 2: psi, q and every budget variable bitwise equal"
else
    notok "OMP_NUM_THREADS=1 and 2: psi, q and every budget variable bitwise equal" \
        "exit statuses $r1 and $r2; $(tail -n 3 "$T/err")" "$py3" "$(cat "$T/py")"
fi

# ---------------------------------------------------------------- restart

# $T/good ran DAYS days uninterrupted, writing a checkpoint every DAYS/2.
# A: the first half only. B: from A's checkpoint to the end.
ck_every=$(ini_get "$SMALL" output checkpoint_every_days)
if [ "$(calc "$ck_every * 2")" != "$DAYS" ]; then
    notok "small33.ini writes a checkpoint half way (checkpoint_every_days = duration_days / 2)" \
        "checkpoint_every_days $ck_every, duration_days $DAYS"
fi
tg run "$SMALL" --out "$T/rsA" --quiet --set "time.duration_days=$half"
rA=$rc
nc ckpt_ok "$T/rsA/checkpoint.nc"
sA=$(cat "$T/py")
if [ "$rA" -eq 0 ] && [ "$sA" = "$(calc "$NSTEPS / 2")" ] &&
    nc ckpt_equals_record "$T/rsA/checkpoint.nc" "$T/good/fields.nc"; then
    ok "restart: the half-way checkpoint (step $sA) equals the uninterrupted run's snapshot bitwise"
else
    notok "restart: the half-way checkpoint equals the uninterrupted run's snapshot bitwise" \
        "exit $rA, checkpoint step '$sA'" "$(cat "$T/py")"
fi
tg run "$SMALL" --out "$T/rsB" --quiet --set "initial.state=$T/rsA/checkpoint.nc"
rB=$rc
if [ "$rB" -eq 0 ] && nc restart "$T/good/fields.nc" "$T/good/budget.nc" "$T/rsA/checkpoint.nc" \
    "$T/rsB/fields.nc" "$T/rsB/budget.nc"; then
    ok "restart: snapshots after day $half and every budget record equal the uninterrupted run bitwise"
else
    notok "restart: snapshots after day $half and every budget record equal the uninterrupted run bitwise" \
        "exit $rB; $(tail -n 3 "$T/err")" "$(cat "$T/py")"
fi

# ---------------------------------------------------------------- signals

MDT=$(ini_get "$MEDIUM" time step_s)
LONG_DAYS=1000
LONG_STEPS=$(calc "$LONG_DAYS * 86400 / $MDT")

# signal_run NAME SIGNAL: a long run in the background, stopped by SIGNAL once
# it has taken its first step (its first progress line is on stderr).
signal_run() {
    local name=$1 sig=$2 pid
    "$TWINGYRE" run "$MEDIUM" --out "$T/$name" --set "time.duration_days=$LONG_DAYS" \
        >"$T/$name.out" 2>"$T/$name.err" &
    pid=$!
    bg_pids+=("$pid")
    if wait_for "$pid" 60 grep -qs '% day' "$T/$name.err" && [ -e "$T/$name/budget.nc" ]; then
        kill "-$sig" "$pid"
    else
        kill -9 "$pid" 2>/dev/null
    fi
    { wait "$pid"; } 2>/dev/null
    rc=$?
    cp "$T/$name.err" "$T/err"
}

for sig in INT TERM; do
    name=sig$sig
    signal_run "$name" "$sig"
    step=""
    nc ckpt_ok "$T/$name/checkpoint.nc" && step=$(cat "$T/py")
    if [ "$rc" -eq 6 ] && [ -n "$step" ] && [ "$step" -gt 0 ] && [ "$step" -lt "$LONG_STEPS" ]; then
        ok "SIG$sig mid-run: exit 6, checkpoint.nc readable and finite at step $step (0 < step < $LONG_STEPS)"
    else
        notok "SIG$sig mid-run: exit 6, checkpoint.nc readable and finite at step 0 < step < $LONG_STEPS" \
            "$(err_tail)" "checkpoint: $(cat "$T/py")"
    fi
done

# Resume the SIGINT run from its checkpoint, 20 steps further.
stepI=""
nc ckpt_ok "$T/sigINT/checkpoint.nc" && stepI=$(cat "$T/py")
if [ -n "$stepI" ]; then
    end=$((stepI + 20))
    tg run "$MEDIUM" --out "$T/sigINT_resume" --quiet --set "initial.state=$T/sigINT/checkpoint.nc" \
        --set "time.duration_days=$(calc "$end * $MDT / 86400")"
    nc ckpt_ok "$T/sigINT_resume/checkpoint.nc"
    got=$(cat "$T/py")
    nb=$(nc info "$T/sigINT_resume/budget.nc" nrec && cat "$T/py")
    if [ "$rc" -eq 0 ] && [ "$got" = "$end" ] && [ "$nb" = 20 ]; then
        ok "resuming from the SIGINT checkpoint completes (exit 0, ends at step $end, 20 budget records)"
    else
        notok "resuming from the SIGINT checkpoint completes" "$(err_tail)" \
            "final step '$got' (expected $end), budget records '$nb' (expected 20)"
    fi
else
    notok "resuming from the SIGINT checkpoint completes" "no readable checkpoint to resume from"
fi

# kill -9: fields.nc is synced after every record, so what is on disk reads.
"$TWINGYRE" run "$MEDIUM" --out "$T/k9" --set "time.duration_days=$LONG_DAYS" \
    --set "output.snapshot_every_days=$(calc "5 * $MDT / 86400")" >"$T/k9.out" 2>"$T/k9.err" &
pid=$!
bg_pids+=("$pid")
if wait_for "$pid" 60 grep -qs '% day' "$T/k9.err"; then
    sleep 0.5 # a few more records, some possibly half written
fi
kill -9 "$pid" 2>/dev/null
{ wait "$pid"; } 2>/dev/null
rc=$?
if [ "$rc" -eq 137 ] && nc killed "$T/k9/fields.nc"; then
    ok "kill -9 mid-run: fields.nc opens with netCDF4 and xarray, >= 1 complete finite record ($(cat "$T/py"))"
else
    notok "kill -9 mid-run: fields.nc opens with netCDF4 and xarray, >= 1 complete finite record" \
        "exit status $rc (expected 137)" "$(cat "$T/py")"
fi

# ---------------------------------------------------------------- blow-up

tg run "$BLOWUP" --out "$T/blow" --quiet
bstep=""
nc ckpt_ok "$T/blow/checkpoint.nc" && bstep=$(cat "$T/py")
if [ "$rc" -eq 5 ] && grep -qE 'at step [0-9]+' "$T/err" && has "model day" "$T/err" &&
    has "x =" "$T/err" && has "y =" "$T/err" && has "CFL" "$T/err" && [ -n "$bstep" ]; then
    ok "CFL blow-up: exit 5, message names CFL, step, model day, x and y; finite checkpoint.nc (step $bstep)"
else
    notok "CFL blow-up: exit 5, message names CFL, step, model day, x and y; finite checkpoint.nc" \
        "$(err_tail)" "checkpoint: $(cat "$T/py")"
fi

# With the CFL limit out of the way the state overflows: non-finite PV.
tg run "$BLOWUP" --out "$T/blownan" --quiet --set time.max_cfl=1e300 --set time.duration_days=4000
nstep=$(grep -oE 'at step [0-9]+' "$T/err" | head -n 1 | grep -oE '[0-9]+')
bstep=""
nc ckpt_ok "$T/blownan/checkpoint.nc" && bstep=$(cat "$T/py")
if [ "$rc" -eq 5 ] && [ -n "$nstep" ] && has "model day" "$T/err" && has "x =" "$T/err" &&
    has "y =" "$T/err" && [ -n "$bstep" ] && [ "$bstep" -eq $((nstep - 1)) ]; then
    ok "non-finite blow-up: exit 5, message names step $nstep, model day, x and y; checkpoint holds the last finite state (step $bstep)"
else
    notok "non-finite blow-up: exit 5, message names step, model day, x and y; checkpoint holds the last finite state" \
        "$(err_tail)" "checkpoint: $(cat "$T/py") (step in the message: '$nstep')"
fi

# A closure with its own state (AR(1) noise): the checkpoint of a
# non-finite blow-up holds that state as it was at the start of the failed
# step, so a run resumed from it takes the same step again and fails the
# same way, writing the same checkpoint (restart consistency: common
# practice).
tg run "$BLOWUP" --out "$T/blowst" --quiet --set time.max_cfl=1e300 --set time.duration_days=4000 \
    --set closure.use=stochastic_additive
msg1=$(grep -oE 'non-finite PV at step [0-9]+.*km' "$T/err" | head -n 1)
tg run "$BLOWUP" --out "$T/blowst2" --quiet --set time.max_cfl=1e300 --set time.duration_days=4000 \
    --set closure.use=stochastic_additive --set initial.state="$T/blowst/checkpoint.nc"
msg2=$(grep -oE 'non-finite PV at step [0-9]+.*km' "$T/err" | head -n 1)
if [ "$rc" -eq 5 ] && [ -n "$msg1" ] && [ "$msg1" = "$msg2" ] &&
    nc same "$T/blowst/checkpoint.nc" "$T/blowst2/checkpoint.nc" step q \
        closure_state_stochastic_additive; then
    ok "non-finite blow-up with a stateful closure: resumed from the checkpoint it fails at the same step and writes the same checkpoint (closure state included)"
else
    notok "non-finite blow-up with a stateful closure: resumed from the checkpoint it fails the same way" \
        "first: '$msg1'" "resumed: '$msg2'" "$(err_tail)" "$(cat "$T/py")"
fi

# An initial state already above max_cfl: the same fault at step 0.
tg run "$SMALL" --out "$T/blow0" --quiet --set initial.noise_amplitude_m2_per_s=1e9
if [ "$rc" -eq 5 ] && grep -qE 'step [0-9]+' "$T/err" && has "model day" "$T/err" &&
    has "x =" "$T/err" && has "y =" "$T/err"; then
    ok "initial state above max_cfl: exit 5, message names step, model day, x and y"
else
    notok "initial state above max_cfl: exit 5, message names step, model day, x and y" "$(err_tail)"
fi
if [ "$rc" -eq 5 ] && nc ckpt_ok "$T/blow0/checkpoint.nc" && [ "$(cat "$T/py")" = 0 ]; then
    ok "initial state above max_cfl: checkpoint.nc holds the (finite) initial state"
else
    notok "initial state above max_cfl: checkpoint.nc holds the (finite) initial state" \
        "exit $rc; checkpoint: $(cat "$T/py")"
fi

finish
