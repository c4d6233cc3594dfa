#!/bin/bash
# run_fft_crosscheck.sh - checks the 2-D real FFT and the kinetic-energy
# spectra against numpy: the Check case "crosscheck" of tests/unit/test_spectrum
# writes a random field, its transform and its spectra to
# $TG_TEST_TMPDIR/twingyre-spectrum-crosscheck.txt; check_fft_numpy.py
# (Debian python3-numpy) recomputes them independently.
#
# Environment: TG_BUILDDIR (where tests/unit/test_spectrum was built),
# TG_SRCDIR, PYTHON (default /usr/bin/python3), TG_TEST_TMPDIR.
# The last line printed is "N passed, M failed".
#
# Part of twingyre. GPL-3.0-or-later.
set -u
tg_omp_from_env=1
. "$(dirname "${BASH_SOURCE[0]}")/../cli/testlib.sh"
tg_scratch fftcheck
if ! TG_TEST_TMPDIR=$T CK_RUN_CASE=crosscheck "$TG_BUILDDIR/tests/unit/test_spectrum" >"$T/c.log" 2>&1; then
    cat "$T/c.log"
    notok "tests/unit/test_spectrum could not write the cross-check data"
    finish
fi
TG_TEST_TMPDIR=$T "$PYTHON" "$TG_SRCDIR/tests/crosscheck/check_fft_numpy.py" "$T/twingyre-spectrum-crosscheck.txt"
