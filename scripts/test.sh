#!/usr/bin/env bash
# Runs every check: regenerates the reference fixtures with the pinned numpy/scipy and diffs them
# against the committed ones, then runs the whole Rust test suite. Installs what a fresh
# Debian/Ubuntu machine lacks (as root or with sudo).
set -euo pipefail
cd "$(dirname "$0")/.."
# shellcheck source=lib/ensure_tools.sh
source scripts/lib/ensure_tools.sh

ensure_packages "${BUILD_PACKAGES[@]}" python3 python3-venv
ensure_cargo

if [ -f scripts/reference/check_fixtures.sh ]; then
    echo "== reference fixtures (numpy/scipy, pinned) ==" >&2
    bash scripts/reference/check_fixtures.sh
else
    echo "note: scripts/reference/check_fixtures.sh is not in this tree; fixture check skipped" >&2
fi

echo "== cargo test ==" >&2
cargo test --all-targets
