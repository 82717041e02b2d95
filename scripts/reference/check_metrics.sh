#!/bin/sh
# Reads the figures tests/service_metrics.rs left in FOLDER (run it with
# REDRESS_METRICS_SAMPLES_DIR=FOLDER) with prometheus_client's parsers, pinned in
# requirements.txt, after the checker's own test shows that broken expositions are refused.
#
#   sh scripts/reference/check_metrics.sh FOLDER
set -eu
here=$(cd "$(dirname "$0")" && pwd)
repo=$(cd "$here/../.." && pwd)
# shellcheck source=reference_venv.sh
. "$repo/scripts/reference/reference_venv.sh"
"$venv/bin/python" "$here/check_metrics.py" --self-test
"$venv/bin/python" "$here/check_metrics.py" "$1"
