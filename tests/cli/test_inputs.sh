#!/bin/bash
# test_inputs.sh - damaged and doubtful inputs are refused, not read as zeros:
# a checkpoint.nc cut by one byte, to 90 % and to 50 %, a fields.nc cut to
# 50 % as [initial] state, a subgrid.nc cut to 90 % given to `fit`, a
# checkpoint or a twin's coarse_start.nc with one flipped data byte, a
# state holding NaN, a checkpoint
# whose step is 1e20, NaN or 2.5 or disagrees with its time, a FIFO as
# initial state or as `fit` input. Each gets its documented exit status, a
# message naming the file and what is wrong, and writes nothing. Also: the
# checksum attribute is the FNV-1a of README (computed here independently in
# Python), a new run does not replace an existing checkpoint.nc without
# --overwrite, and a run failing during its set-up (file size limit, as a
# full disk) leaves no folder it made.
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
tg_scratch inputs
tg_need_program
SMALL=$TG_SRCDIR/tests/cli/configs/small33.ini

# edit.py: netCDF edits with an independent FNV-1a (draft-eastlake-fnv,
# section 2; 64-bit offset basis and prime) over big-endian doubles.
cat >"$T/edit.py" <<'PYEOF'
import sys
import numpy as np
import netCDF4

def fnv(values):
    h = 0xcbf29ce484222325
    for b in np.ascontiguousarray(values, dtype=">f8").tobytes():
        h = ((h ^ b) * 0x100000001b3) & 0xFFFFFFFFFFFFFFFF
    return "fnv1a64:%016x" % h

cmd, path = sys.argv[1], sys.argv[2]
if cmd == "checksum":          # the stored checksum of VAR equals ours
    with netCDF4.Dataset(path) as d:
        v = d[sys.argv[3]]
        v.set_auto_maskandscale(False)
        ok = v.getncattr("data_checksum") == fnv(np.asarray(v[...]).ravel())
        print(v.getncattr("data_checksum"), fnv(np.asarray(v[...]).ravel()))
        sys.exit(0 if ok else 1)
with netCDF4.Dataset(path, "r+") as d:
    if cmd == "set":           # set VAR VALUE, with a matching checksum
        v = d[sys.argv[3]]
        v[...] = float(sys.argv[4])
        if "data_checksum" in v.ncattrs():
            v.setncattr("data_checksum", fnv(np.asarray(v[...]).ravel()))
    elif cmd == "nan":         # psi of the last record, layer 1, y index 4, x index 6 (from 1)
        d["psi"][-1, 0, 3, 5] = np.nan
PYEOF
edit() { "$PYTHON" "$T/edit.py" "$@" >"$T/py" 2>&1; }

# flip_byte FILE OFFSET MASK: XORs the byte at OFFSET with MASK in place.
flip_byte() {
    local byte
    byte=$(od -An -tu1 -j "$2" -N1 "$1" | tr -d ' ')
    printf "\\$(printf '%03o' $((byte ^ $3)))" | dd of="$1" bs=1 seek="$2" conv=notrunc 2>/dev/null
}

# A good run: fields.nc (11 records), checkpoint.nc at step 240.
tg run "$SMALL" --out "$T/good" --quiet
check "a good run to draw inputs from" $([ "$rc" -eq 0 ] && [ -s "$T/good/checkpoint.nc" ]; echo $?) "$(err_tail)"
CK=$T/good/checkpoint.nc
size=$(stat -c %s "$CK")

# refused NAME FILE STATUS TEXT [ARGS...]: a run from FILE exits STATUS,
# says TEXT and the file's name, and makes no output folder.
refused() {
    local name=$1 file=$2 want=$3 text=$4
    shift 4
    tg run "$SMALL" --out "$T/o-$name" --quiet --set "initial.state=$file" \
        --set time.duration_days=12 "$@"
    if [ "$rc" -eq "$want" ] && has "$file" "$T/err" && has "$text" "$T/err" &&
        [ ! -e "$T/o-$name" ]; then
        ok "$name: exit $want, the message names the file and says '$text'; nothing written"
    else
        notok "$name: exit $want, the message names the file and says '$text'; nothing written" \
            "$(err_tail)" "output folder: $(dir_state "$T/o-$name" | head -n 3)"
    fi
}

head -c $((size - 1)) "$CK" >"$T/ck_less1.nc"
head -c $((size * 9 / 10)) "$CK" >"$T/ck_90.nc"
head -c $((size / 2)) "$CK" >"$T/ck_50.nc"
refused "checkpoint minus its last byte" "$T/ck_less1.nc" 3 "cut short"
refused "checkpoint cut to 90 %" "$T/ck_90.nc" 3 "cut short"
refused "checkpoint cut to 50 %" "$T/ck_50.nc" 3 "cut short"
fsize=$(stat -c %s "$T/good/fields.nc")
head -c $((fsize / 2)) "$T/good/fields.nc" >"$T/fields_50.nc"
refused "fields.nc cut to 50 % as [initial] state" "$T/fields_50.nc" 3 "cut short"

# One byte inside q's data (the file ends with q), flipped.
cp "$CK" "$T/ck_flip.nc"
flip_byte "$T/ck_flip.nc" $((size - 1000)) 0x10
refused "checkpoint with a flipped data byte" "$T/ck_flip.nc" 3 "do not match their checksum"

edit checksum "$CK" q
check "the checkpoint's data_checksum of q is the FNV-1a of README, computed independently" $? "$(cat "$T/py")"

# A non-finite value in a state.
cp "$T/good/fields.nc" "$T/fields_nan.nc"
edit nan "$T/fields_nan.nc"
refused "a state holding NaN" "$T/fields_nan.nc" 3 "psi of record 11 holds nan at layer 1, y index 4, x index 6"

# Checkpoint fields taken on trust before: step 1e20, NaN, 2.5; a step
# that disagrees with the time (written with another step size: exit 2).
for v in 1e20 nan 2.5 -1; do
    cp "$CK" "$T/ck_step.nc"
    edit set "$T/ck_step.nc" step "$v"
    refused "checkpoint with step = $v" "$T/ck_step.nc" 3 "step is"
done
cp "$CK" "$T/ck_time.nc"
edit set "$T/ck_time.nc" step 120
refused "checkpoint whose step (120) disagrees with its time (day 10, step 240 of 3600 s)" \
    "$T/ck_time.nc" 2 "written with another step size"
cp "$CK" "$T/ck_inf.nc"
edit set "$T/ck_inf.nc" time_seconds inf
refused "checkpoint with time_seconds = inf" "$T/ck_inf.nc" 3 "time_seconds is inf"

# A FIFO never blocks: refused at once (timeout 60 s guards the test).
mkfifo "$T/fifo"
tg_fifo() { timeout 60 "$TWINGYRE" "$@" >"$T/out" 2>"$T/err"; rc=$?; }
tg_fifo run "$SMALL" --out "$T/o-fifo" --quiet --set "initial.state=$T/fifo"
check "a FIFO as initial state: exit 2 at once, 'not a regular file', nothing written" \
    $([ "$rc" -eq 2 ] && has "not a regular file" "$T/err" && [ ! -e "$T/o-fifo" ]; echo $?) "$(err_tail)"
tg_fifo fit "$T/fifo" --out "$T/fifo_fit.txt"
check "a FIFO as fit input: exit 3 at once, 'not a regular file', nothing written" \
    $([ "$rc" -eq 3 ] && has "not a regular file" "$T/err" && [ ! -e "$T/fifo_fit.txt" ]; echo $?) "$(err_tail)"

# fit on a subgrid.nc cut to 90 %: a tiny twin (33 -> 17 points).
tiny_twin 4 8 >"$T/twin.ini"
tg twin "$T/twin.ini" --out "$T/tw" --quiet
SG=$T/tw/subgrid.nc
tg fit "$SG" --out "$T/fit_whole.txt"
check "fit on the twin's whole subgrid.nc works (exit 0)" $([ "$rc" -eq 0 ]; echo $?) "$(err_tail)"
edit checksum "$SG" subgrid_forcing
check "subgrid.nc carries data_checksum on subgrid_forcing, the FNV-1a of every record" $? "$(cat "$T/py")"
gsize=$(stat -c %s "$SG")
head -c $((gsize * 9 / 10)) "$SG" >"$T/sub_90.nc"
tg fit "$T/sub_90.nc" --out "$T/fit_90.txt"
check "fit on a subgrid.nc cut to 90 %: exit 3, names the file, 'cut short', no coefficients file" \
    $([ "$rc" -eq 3 ] && has "$T/sub_90.nc" "$T/err" && has "cut short" "$T/err" &&
        [ ! -e "$T/fit_90.txt" ]; echo $?) "$(err_tail)"

# The twin's coarse_start.nc (read back by its coarse runs) is checksummed
# too: a flipped byte in psi's data (the end of the file) is refused.
cp "$T/tw/coarse_start.nc" "$T/start_flip.nc"
csize=$(stat -c %s "$T/start_flip.nc")
flip_byte "$T/start_flip.nc" $((csize - 3)) 0x01
refused "the twin's coarse_start.nc with a flipped data byte" "$T/start_flip.nc" 3 \
    "psi do not match their checksum"

# A damaged checkpoint in a run's own folder: a resume from it leaves the
# folder as it was (the checkpoint is not overwritten).
cp -r "$T/good" "$T/own"
head -c $((size * 9 / 10)) "$CK" >"$T/own/checkpoint.nc"
before=$(dir_state "$T/own")
tg run "$SMALL" --out "$T/own" --quiet --set "initial.state=$T/own/checkpoint.nc" \
    --set time.duration_days=12
check "resuming in place from a damaged checkpoint: exit 3, the folder unchanged" \
    $([ "$rc" -eq 3 ] && [ "$(dir_state "$T/own")" = "$before" ]; echo $?) "$(err_tail)"

# A new run does not replace an existing checkpoint.nc without --overwrite.
mkdir -p "$T/ckonly"
cp "$CK" "$T/ckonly/checkpoint.nc"
before=$(dir_state "$T/ckonly")
tg run "$SMALL" --out "$T/ckonly" --quiet
check "a new run into a folder holding only checkpoint.nc: exit 3, 'already exists', unchanged" \
    $([ "$rc" -eq 3 ] && has "checkpoint.nc already exists" "$T/err" &&
        [ "$(dir_state "$T/ckonly")" = "$before" ]; echo $?) "$(err_tail)"
tg run "$SMALL" --out "$T/ckonly" --quiet --overwrite
check "... and with --overwrite it runs (exit 0)" $([ "$rc" -eq 0 ]; echo $?) "$(err_tail)"

# A set-up failure (files limited to 4 KiB, as a full disk would do; the
# signal is ignored so that the write fails instead) leaves no folder.
(
    trap '' XFSZ
    ulimit -f 4
    exec "$TWINGYRE" run "$SMALL" --out "$T/full/run" --quiet
) >"$T/out" 2>"$T/err"
rc=$?
check "a run failing in its set-up on a file size limit: exit 3, leaves no folder it made" \
    $([ "$rc" -eq 3 ] && [ ! -e "$T/full/run" ]; echo $?) "$(err_tail)" \
    "left: $(ls -la "$T/full/run" 2>&1 | head -n 5)"

finish
