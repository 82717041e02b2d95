#!/bin/sh
# Runs compare_scipy.py with the pinned numpy/scipy (the same virtual environment as the
# reference fixtures: REDRESS_REFERENCE_VENV, default .venv-reference; created when missing).
# OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE, when the machine sets them, slow a current numpy; they
# are unset for this command only (sosfilt and lfilter do not call BLAS, but the import does).
set -eu
here=$(cd "$(dirname "$0")" && pwd)
repo=$(cd "$here/../.." && pwd)
# shellcheck source=../reference/reference_venv.sh
. "$repo/scripts/reference/reference_venv.sh"
cd "$repo"
exec env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE OPENBLAS_NUM_THREADS=1 \
    "$venv/bin/python" "$here/compare_scipy.py" "$@"
