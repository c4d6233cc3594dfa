#!/bin/bash
# run_filter_crosscheck.sh - checks the coarse-graining filters against
# scipy.fft: the Check case "crosscheck" of tests/unit/test_coarsen writes a
# random field and its filtered versions to
# $TG_TEST_TMPDIR/twingyre-filter-crosscheck.txt; check_filter_scipy.py
# (Debian python3-scipy) recomputes them independently.
#
# Environment: TG_BUILDDIR (where tests/unit/test_coarsen was built),
# TG_SRCDIR, PYTHON (default /usr/bin/python3), TG_TEST_TMPDIR.
# The last line printed is "N passed, M failed".
#
# Part of twingyre. GPL-3.0-or-later.
set -u
tg_omp_from_env=1
. "$(dirname "${BASH_SOURCE[0]}")/../cli/testlib.sh"
tg_scratch filtercheck
if ! TG_TEST_TMPDIR=$T CK_RUN_CASE=crosscheck "$TG_BUILDDIR/tests/unit/test_coarsen" >"$T/c.log" 2>&1; then
    cat "$T/c.log"
    notok "tests/unit/test_coarsen could not write the cross-check data"
    finish
fi
TG_TEST_TMPDIR=$T "$PYTHON" "$TG_SRCDIR/tests/crosscheck/check_filter_scipy.py" "$T/twingyre-filter-crosscheck.txt"
