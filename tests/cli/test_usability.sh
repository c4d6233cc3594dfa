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
has "--method ols|ridge|stlsq|rvm" "$T/out" && has "[ols]" "$T/out" && has "[4]" "$T/out"
check "fit --help lists every option with its default" $? "$(cat "$T/out")"
tg help vet
has "usage: twingyre vet" "$T/out" && has "  9  " "$T/out"
check "help vet is vet --help, with exit status 9" $? "$(head -3 "$T/out")"
tg --help
n=$(grep -cE '^  (run|describe|closures|twin|fit|vet|sweep) ' "$T/out")
[ "$rc" -eq 0 ] && [ "$n" -eq 7 ] && ! has "--chunk-samples" "$T/out"
check "the global help lists the 7 commands one line each" $? "$(cat "$T/out")"
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
[ "$n" -eq 13 ]
check "closures coefficients lists the 13 basis terms" $? "$n found" "$(cat "$T/out")"
tg closures leit
[ "$rc" -eq 1 ] && has "did you mean leith?" "$T/err"
check "closures leit suggests leith" $? "$(err_tail)"
tg closures
# The "default" column starts at the same place on every parameter line.
cols=$(grep -E '^  \[' "$T/out" | awk '{ print index($0, " default ") }' | sort -u | wc -l)
[ "$rc" -eq 0 ] && [ "$cols" -eq 1 ]
check "the closures table's columns line up" $? "$cols different columns" \
    "$(grep -E '^  \[' "$T/out" | head -5)"

finish
