#!/bin/sh
# Regenerates the reference fixtures in a temporary folder and compares them value by value with
# the committed ones: tests/fixtures/reference (make_fixtures.py), tests/fixtures/substitutes
# (make_substitute_fixtures.py), tests/fixtures/measure (make_measure_fixtures.py),
# tests/fixtures/long_channels (make_long_channel_fixtures.py, which also needs pyroomacoustics),
# tests/fixtures/noise_aware (make_noise_aware_fixtures.py), tests/fixtures/trade_off
# (make_trade_off_fixtures.py), tests/fixtures/drift (make_drift_fixtures.py) and
# tests/fixtures/linearity (make_linearity_fixtures.py).
# Structure, keys, lengths, strings, booleans and integers must match exactly, floating-point
# values within the tolerances stated in fixture_compare.py (last bits differ between processors
# and library builds). Exits non-zero when any set differs; every set is always checked.
#
# Before that, the checker's own tests (test_fixture_compare.py) show that it passes moved last
# bits and fails real differences. OPENBLAS_CORETYPE and OPENBLAS_L2_SIZE are left as the
# environment sets them.
#
# With REDRESS_FIXTURES_OTHER_PATH=1 the sets that go through BLAS are regenerated once more with
# OpenBLAS forced onto another code path (OPENBLAS_CORETYPE=Prescott, its oldest x86-64 kernels),
# as a machine with another processor would run them: the same comparison must pass.
#
# The pinned numpy/scipy live in a virtual environment: REDRESS_REFERENCE_VENV names it
# (default: .venv-reference at the repository root). It is created and filled from
# requirements.txt when missing.
set -eu

here=$(cd "$(dirname "$0")" && pwd)
repo=$(cd "$here/../.." && pwd)
# shellcheck source=reference_venv.sh
. "$repo/scripts/reference/reference_venv.sh"

# One BLAS thread: the eigenvalue routines behind numpy.roots then run the same way every time.
export OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1
status=0
(cd "$here" && "$venv/bin/python" -m unittest test_fixture_compare) || status=1
"$venv/bin/python" "$here/make_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_substitute_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_measure_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_long_channel_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_noise_aware_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_trade_off_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_drift_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_linearity_fixtures.py" --check || status=1
if [ "${REDRESS_FIXTURES_OTHER_PATH:-0}" = 1 ] && [ "$(uname -m)" = x86_64 ]; then
    echo "regenerating with OpenBLAS on another code path (OPENBLAS_CORETYPE=Prescott)" >&2
    OPENBLAS_CORETYPE=Prescott "$venv/bin/python" "$here/make_fixtures.py" --check || status=1
    OPENBLAS_CORETYPE=Prescott "$venv/bin/python" "$here/make_substitute_fixtures.py" --check ||
        status=1
fi
exit "$status"
