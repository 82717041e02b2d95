#!/bin/sh
# Regenerates the reference fixtures in a temporary folder and compares them byte for byte with
# the committed ones: tests/fixtures/reference (make_fixtures.py), tests/fixtures/substitutes
# (make_substitute_fixtures.py), tests/fixtures/measure (make_measure_fixtures.py) and
# tests/fixtures/long_channels (make_long_channel_fixtures.py, which also needs pyroomacoustics). Exits
# non-zero when any set differs; every set is always checked.
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
"$venv/bin/python" "$here/make_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_substitute_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_measure_fixtures.py" --check || status=1
"$venv/bin/python" "$here/make_long_channel_fixtures.py" --check || status=1
exit "$status"
